/** One measured step of the benchmark: times in milliseconds, median of repeated runs with min and max. */
export interface BenchRow {
  name: string;
  medianMs: number;
  minMs: number;
  maxMs: number;
  target?: string;
  note?: string;
}

/**
 * Median (the middle value; the mean of the two middle ones for an even count), min and max of
 * repeated timings, in milliseconds.
 */
export function timeStats(times: readonly number[]): { medianMs: number; minMs: number; maxMs: number } {
  const sorted = [...times].sort((a, b) => a - b);
  const mid = sorted.length >> 1;
  const medianMs = sorted.length % 2 ? sorted[mid]! : (sorted[mid - 1]! + sorted[mid]!) / 2;
  return { medianMs, minMs: sorted[0]!, maxMs: sorted[sorted.length - 1]! };
}
