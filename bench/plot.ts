/**
 * Drawing speed of the pattern plot's data step: the min/max per pixel column of a long pattern
 * (what each zoom, pan or resize recomputes for every curve), on 100 000 and 2 000 000 points over a
 * 1 100-column plot, whole range and zoomed to a tenth. Synthetic data, fixed values.
 */
import { decimateMinMax, visibleRange } from '../src/core/model/decimate.js';
import { timeStats, type BenchRow } from './types.js';

const COLUMNS = 1100;

function pattern(n: number): { x: Float64Array; y: Float32Array } {
  const x = new Float64Array(n);
  const y = new Float32Array(n);
  for (let i = 0; i < n; i++) {
    x[i] = 5 + (i * 145) / (n - 1);
    y[i] = 100 + 5000 * Math.exp(-(((x[i]! - 28.44) / 0.1) ** 2)) + (i % 13);
  }
  return { x, y };
}

function measure(name: string, repeats: number, work: () => void, target: string): BenchRow {
  const times: number[] = [];
  for (let i = 0; i < repeats; i++) {
    const t0 = performance.now();
    work();
    times.push(performance.now() - t0);
  }
  return { name, ...timeStats(times), target };
}

export async function run(): Promise<BenchRow[]> {
  const rows: BenchRow[] = [];
  for (const n of [100_000, 2_000_000]) {
    const { x, y } = pattern(n);
    const step = (low: number, high: number) => () => {
      const { from, to } = visibleRange(x, low, high);
      decimateMinMax(x, y, { from, to, xLow: low, xHigh: high, buckets: COLUMNS });
    };
    const label = n.toLocaleString('en-US').replace(/,/g, ' ');
    // One curve; the plot decimates up to four (measured, background, fit, difference) per update.
    rows.push(measure(`plot: min/max per column of ${label} points, whole range (one curve)`, 9, step(5, 150), n > 100_000 ? '< 25 ms' : '< 5 ms'));
    rows.push(measure(`plot: min/max per column of ${label} points, a tenth in view (one curve)`, 9, step(60, 74.5), n > 100_000 ? '< 5 ms' : '< 1 ms'));
  }
  return rows;
}
