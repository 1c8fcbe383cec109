/** A unit cell: lengths in Å, angles in degrees, space group as a Hermann–Mauguin symbol or number. */
export interface UnitCell {
  a: number;
  b: number;
  c: number;
  alpha: number;
  beta: number;
  gamma: number;
  spaceGroup?: string;
}

export type Hkl = [number, number, number];
