/** First index i with values[i] >= value in an increasing array (values.length when there is none): binary search. */
export function lowerBound(values: ArrayLike<number>, value: number): number {
  let lo = 0;
  let hi = values.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (values[mid] < value) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** Index of the value nearest to `value` in an increasing, non-empty array (the higher one on a tie). */
export function nearestIndex(values: ArrayLike<number>, value: number): number {
  const i = lowerBound(values, value);
  if (i <= 0) return 0;
  if (i >= values.length) return values.length - 1;
  return value - values[i - 1] < values[i] - value ? i - 1 : i;
}
