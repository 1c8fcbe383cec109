/** One measured step of the benchmark: times in milliseconds, median of repeated runs with min and max. */
export interface BenchRow {
  name: string;
  medianMs: number;
  minMs: number;
  maxMs: number;
  target?: string;
  note?: string;
}
