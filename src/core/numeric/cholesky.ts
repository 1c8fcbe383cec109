/** Cholesky factorisation of symmetric positive-definite matrices (row-major n×n Float64Array), solves and inverses. */

/**
 * In-place Cholesky factor (lower triangle) of a symmetric n×n matrix, failing where a pivot falls below
 * `relative` times its diagonal element (that parameter is then, to working precision, a combination of
 * the earlier ones). Returns −1 on success, else the column where it failed.
 */
function choleskyFactorRelative(m: Float64Array, n: number, relative: number): number {
  for (let j = 0; j < n; j++) {
    const diagonal = m[j * n + j];
    let d = diagonal;
    for (let k = 0; k < j; k++) d -= m[j * n + k] * m[j * n + k];
    if (!(d > relative * diagonal) || !(d > 0)) return j;
    const root = Math.sqrt(d);
    m[j * n + j] = root;
    for (let i = j + 1; i < n; i++) {
      let s = m[i * n + j];
      for (let k = 0; k < j; k++) s -= m[i * n + k] * m[j * n + k];
      m[i * n + j] = s / root;
    }
  }
  return -1;
}

/** In-place Cholesky factor of a symmetric positive-definite matrix; false if it is not positive definite. */
export function choleskyFactor(m: Float64Array, n: number): boolean {
  return choleskyFactorRelative(m, n, 0) === -1;
}

/** Solve L·Lᵀ·v = b in place (L from choleskyFactor). */
export function choleskySolve(l: Float64Array, n: number, b: Float64Array): void {
  for (let i = 0; i < n; i++) {
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[i * n + k] * b[k];
    b[i] = s / l[i * n + i];
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i];
    for (let k = i + 1; k < n; k++) s -= l[k * n + i] * b[k];
    b[i] = s / l[i * n + i];
  }
}

/**
 * Inverse of a symmetric positive semi-definite matrix with its degenerate parameters held fixed: the
 * parameters are factored in `order`, and one whose pivot falls below `relativePivot` times its diagonal
 * element (or that no datum sees: diagonal ≤ 0) is a combination of those before it; it is fixed and the
 * factorisation is repeated without it. The inverse of the rest is the covariance conditional on the fixed
 * ones (their rows and columns 0, their diagonal NaN). So put the parameters to keep first.
 * `work` (n² long) and `column` (n long) are scratch buffers.
 */
export function conditionalInverse(
  matrix: Float64Array,
  n: number,
  order: ReadonlyArray<number>,
  relativePivot: number,
  work: Float64Array,
  column: Float64Array,
): { inverse: Float64Array; fixedCount: number } {
  const fixed = new Uint8Array(n);
  let fixedCount = 0;
  for (let a = 0; a < n; a++) {
    if (!(matrix[a * n + a] > 0)) {
      fixed[a] = 1;
      fixedCount++;
    }
  }
  const kept = new Int32Array(n);
  let free = 0;
  for (;;) {
    free = 0;
    for (const a of order) if (!fixed[a]) kept[free++] = a;
    for (let r = 0; r < free; r++) for (let c = 0; c < free; c++) work[r * free + c] = matrix[kept[r] * n + kept[c]];
    const failedAt = choleskyFactorRelative(work, free, relativePivot);
    if (failedAt < 0) break;
    fixed[kept[failedAt]] = 1;
    fixedCount++;
  }
  const inverse = new Float64Array(n * n);
  for (let a = 0; a < n; a++) if (fixed[a]) inverse[a * n + a] = Number.NaN;
  for (let c = 0; c < free; c++) {
    column.fill(0, 0, free);
    column[c] = 1;
    choleskySolve(work, free, column);
    for (let r = 0; r < free; r++) inverse[kept[r] * n + kept[c]] = column[r];
  }
  return { inverse, fixedCount };
}
