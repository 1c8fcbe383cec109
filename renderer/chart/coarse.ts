/**
 * The coarse copy of a long curve (see CurveSource in pattern-chart.ts): the min/max points of many
 * columns over its whole range, made once (off the page's thread for a sample's curves) so whole and
 * slightly zoomed views never pass over millions of points.
 */
import { decimateMinMax } from '../../src/core/model/decimate.js';

/** Curves longer than this get a coarse copy. */
export const COARSE_ABOVE_POINTS = 200_000;
/** Columns of the coarse copy: many times a plot's width, so a view drawn from it keeps every column's extremes but at their edges. */
export const COARSE_COLUMNS = 8_192;

/** The indices of a curve's coarse copy over its whole range (x monotonic). */
export function coarseIndices(x: ArrayLike<number>, y: ArrayLike<number>): Int32Array {
  const n = x.length;
  const low = Math.min(x[0]!, x[n - 1]!);
  const high = Math.max(x[0]!, x[n - 1]!);
  return decimateMinMax(x, y, { from: 0, to: n, xLow: low, xHigh: high, buckets: COARSE_COLUMNS });
}

/** A pause that lets the page draw and answer input before the next step of a long drawing. */
export const nextTask = (): Promise<void> => new Promise((resolve) => setTimeout(resolve, 0));
