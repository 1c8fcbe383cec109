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
