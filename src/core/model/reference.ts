import type { Hkl, UnitCell } from './cell.js';

/** One line of a reference phase, wavelength-free. */
export interface ReferenceLine {
  /** d-spacing, Å. */
  d: number;
  /** Relative intensity 0–100, or null when unknown (positions computed from a cell alone). */
  intensity: number | null;
  hkl?: Hkl;
  multiplicity?: number;
}

export const STANDARD_TAGS = ['target', 'impurity', 'precursor', 'decomposition product', 'standard'] as const;

/** A reference phase as the library stores it. */
export interface Reference {
  name: string;
  formula: string;
  tags: string[];
  /** Where the values come from (required). */
  source: string;
  notes?: string;
  /** Reference intensity ratio I/Ic (corundum), if known. */
  rir?: number | null;
  cell?: UnitCell | null;
  /** How the intensities were obtained, e.g. "computed from CIF for Cu Kα1, Bragg–Brentano". */
  intensityBasis?: string;
  lines: ReferenceLine[];
}

/** A stored reference with its identity in the library. */
export interface StoredReference extends Reference {
  id: number;
  version: number;
  createdAt: string;
}
