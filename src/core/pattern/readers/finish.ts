import { InputError } from '../../errors.js';
import type { Wavelength } from '../../model/wavelengths.js';

/** What a format reader found, before the shared clean-up into a Pattern. */
export interface RawPattern {
  x: Float64Array;
  y: Float64Array;
  /** Uncertainty given by the file, or null (then √counts). */
  sigma: Float64Array | null;
  wavelength: Wavelength | null;
  meta: Record<string, string>;
  notes: string[];
  /** 'xy', 'csv' or 'pdcif'. */
  format: string;
  /** Line of the last data value, for messages about the data as a whole. */
  lastLine: number;
}

export interface FinishedData {
  x: Float64Array;
  y: Float64Array;
  sigma: Float64Array;
  notes: string[];
}

/** Fewer points than this cannot be a diffraction pattern. */
export const MIN_POINTS = 5;

/**
 * Shared clean-up: x strictly increasing (reverse a descending scan, sort stray rows, merge duplicate
 * 2θ by averaging), sigma from the file or √max(y, 1), and notes on every change for the user.
 */
export function finishData(raw: RawPattern, fileName: string): FinishedData {
  const notes = [...raw.notes];
  const n = raw.x.length;
  requirePoints(n, raw, fileName);
  let x = raw.x;
  let y = raw.y;
  let given = raw.sigma;
  let ordered = true;
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(x[i]) || !Number.isFinite(y[i]) || (given && !Number.isFinite(given[i]))) {
      throw new InputError(`a value is not a finite number (point ${i + 1})`, { file: fileName, line: raw.lastLine });
    }
    if (i > 0 && x[i] < x[i - 1]) ordered = false;
  }

  if (!ordered && x[n - 1] < x[0]) {
    x = x.slice().reverse();
    y = y.slice().reverse();
    given = given ? given.slice().reverse() : null;
    notes.push('2θ was descending; the points were put in increasing order');
  }
  if (!ordered && !isNonDecreasing(x)) {
    const order = Array.from({ length: n }, (_, i) => i).sort((a, b) => x[a] - x[b] || a - b);
    x = permute(x, order);
    y = permute(y, order);
    given = given ? permute(given, order) : null;
    notes.push('some rows were out of 2θ order; the points were sorted by 2θ');
  }

  let nonPositive = 0;
  let badSigma = 0;
  const pointSigma = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    if (y[i] <= 0) nonPositive++;
    const fromFile = given ? given[i] : Number.NaN;
    if (given && !(fromFile > 0)) badSigma++;
    pointSigma[i] = fromFile > 0 ? fromFile : Math.sqrt(Math.max(y[i], 1));
  }
  if (nonPositive > 0) {
    notes.push(`${nonPositive} point(s) have zero or negative counts; they are kept, with an uncertainty of at least 1 count`);
  }
  if (badSigma > 0) notes.push(`${badSigma} uncertainty value(s) were zero or negative; √counts was used there instead`);

  const merged = mergeDuplicates(x, y, pointSigma);
  if (merged.duplicates > 0) {
    notes.push(`${merged.duplicates} point(s) repeated a 2θ value; repeated points were merged by averaging their counts`);
  }
  requirePoints(merged.x.length, raw, fileName);
  noteUnevenSteps(merged.x, notes);
  return { x: merged.x, y: merged.y, sigma: merged.sigma, notes };
}

function requirePoints(count: number, raw: RawPattern, fileName: string): void {
  if (count < MIN_POINTS) {
    throw new InputError(
      `only ${count} data point(s) found; a diffraction pattern needs at least ${MIN_POINTS} (2θ, intensity) rows`,
      { file: fileName, line: raw.lastLine },
    );
  }
}

function isNonDecreasing(x: Float64Array): boolean {
  for (let i = 1; i < x.length; i++) if (x[i] < x[i - 1]) return false;
  return true;
}

function permute(values: Float64Array, order: number[]): Float64Array {
  const out = new Float64Array(values.length);
  for (let i = 0; i < order.length; i++) out[i] = values[order[i]];
  return out;
}

/** Average runs of equal x; the uncertainty of a mean of k values is √(Σσ²)/k. */
function mergeDuplicates(
  x: Float64Array,
  y: Float64Array,
  sigma: Float64Array,
): { x: Float64Array; y: Float64Array; sigma: Float64Array; duplicates: number } {
  let runs = 1;
  for (let i = 1; i < x.length; i++) if (x[i] !== x[i - 1]) runs++;
  if (runs === x.length) return { x, y, sigma, duplicates: 0 };
  const mx = new Float64Array(runs);
  const my = new Float64Array(runs);
  const ms = new Float64Array(runs);
  let out = 0;
  let i = 0;
  while (i < x.length) {
    let j = i;
    let meanY = 0;
    let scale = 0;
    while (j < x.length && x[j] === x[i]) {
      meanY += (y[j] - meanY) / (j - i + 1);
      scale = Math.max(scale, sigma[j]);
      j++;
    }
    let sumS2 = 0;
    for (let m = i; m < j; m++) sumS2 += (sigma[m] / scale) ** 2;
    mx[out] = x[i];
    my[out] = meanY;
    ms[out] = (scale * Math.sqrt(sumS2)) / (j - i);
    out++;
    i = j;
  }
  return { x: mx, y: my, sigma: ms, duplicates: x.length - runs };
}

/** Uneven steps are kept as they are; the user is told when the step varies by more than 1 %. */
function noteUnevenSteps(x: Float64Array, notes: string[]): void {
  let minStep = Infinity;
  let maxStep = 0;
  for (let i = 1; i < x.length; i++) {
    const step = x[i] - x[i - 1];
    if (step < minStep) minStep = step;
    if (step > maxStep) maxStep = step;
  }
  if (maxStep > minStep * 1.01) {
    notes.push(`the 2θ step is uneven (from ${formatStep(minStep)}° to ${formatStep(maxStep)}°); the points are used as they are`);
  }
}

function formatStep(step: number): string {
  return Number(step.toPrecision(4)).toString();
}
