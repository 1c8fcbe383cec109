/**
 * Patterns on one 2θ grid: linear interpolation of one pattern onto another's points (for the A − B
 * difference, where the two were measured on different steps), and one column per pixel for the heat
 * map (the highest point in each column, so a peak narrower than a column is not lost). x ascending.
 */

/** y of (x, y) at each grid point by linear interpolation; NaN outside the measured range. */
export function interpolateOnto(x: ArrayLike<number>, y: ArrayLike<number>, grid: ArrayLike<number>): Float64Array {
  const out = new Float64Array(grid.length);
  const n = x.length;
  let j = 0;
  for (let k = 0; k < grid.length; k++) {
    const g = grid[k]!;
    if (n === 0 || g < x[0]! || g > x[n - 1]!) {
      out[k] = Number.NaN;
      continue;
    }
    // The grid is ascending too, so the bracketing interval only moves right.
    if (j > 0 && x[j]! > g) j = 0;
    while (j < n - 2 && x[j + 1]! < g) j++;
    const x0 = x[j]!;
    const x1 = x[Math.min(j + 1, n - 1)]!;
    out[k] = x1 > x0 ? y[j]! + ((y[j + 1]! - y[j]!) * (g - x0)) / (x1 - x0) : y[j]!;
  }
  return out;
}

export interface Difference {
  /** A's own 2θ points inside the range both cover. */
  x: Float64Array;
  /** A − B there, B interpolated linearly onto A's points. */
  y: Float64Array;
  from: number;
  to: number;
  /** True when B's points are not A's (so B was interpolated). */
  interpolated: boolean;
}

/** A − B on A's 2θ points where both were measured, or null when their ranges do not overlap. */
export function differenceOnGrid(a: { x: ArrayLike<number>; y: ArrayLike<number> }, b: { x: ArrayLike<number>; y: ArrayLike<number> }, scaleA = 1, scaleB = 1): Difference | null {
  if (a.x.length < 2 || b.x.length < 2) return null;
  const from = Math.max(a.x[0]!, b.x[0]!);
  const to = Math.min(a.x[a.x.length - 1]!, b.x[b.x.length - 1]!);
  if (!(to > from)) return null;
  const kept: number[] = [];
  for (let i = 0; i < a.x.length; i++) if (a.x[i]! >= from && a.x[i]! <= to) kept.push(i);
  const x = Float64Array.from(kept, (i) => a.x[i]!);
  const bOnA = interpolateOnto(b.x, b.y, x);
  const y = Float64Array.from(kept, (i, k) => a.y[i]! / scaleA - bOnA[k]! / scaleB);
  let same = a.x.length === b.x.length;
  for (let i = 0; same && i < a.x.length; i++) same = Math.abs(a.x[i]! - b.x[i]!) < 1e-9;
  return { x, y, from, to, interpolated: !same };
}

/**
 * One value per column over [from, to]: the highest point whose 2θ falls in the column, or, for a
 * column no point falls in (columns finer than the step), the value interpolated at its centre.
 */
export function columnMaxima(x: ArrayLike<number>, y: ArrayLike<number>, from: number, to: number, columns: number): Float64Array {
  const out = new Float64Array(columns).fill(Number.NaN);
  const width = (to - from) / columns;
  for (let i = 0; i < x.length; i++) {
    const c = Math.floor((x[i]! - from) / width);
    if (c < 0 || c >= columns || !(x[i]! <= to)) continue;
    if (!(out[c]! >= y[i]!)) out[c] = y[i]!;
  }
  const empty: number[] = [];
  for (let c = 0; c < columns; c++) if (Number.isNaN(out[c]!)) empty.push(c);
  if (empty.length) {
    const centres = Float64Array.from(empty, (c) => from + (c + 0.5) * width);
    const filled = interpolateOnto(x, y, centres);
    empty.forEach((c, k) => (out[c] = filled[k]!));
  }
  return out;
}
