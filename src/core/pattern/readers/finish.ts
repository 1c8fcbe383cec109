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

  ({ x, y, given } = dropImpossibleAngles(x, y, given, raw, fileName, notes));
  const kept = x.length;
  ordered = isNonDecreasing(x);

  if (!ordered && x[kept - 1] < x[0]) {
    x = x.slice().reverse();
    y = y.slice().reverse();
    given = given ? given.slice().reverse() : null;
    notes.push('2θ was descending; the points were put in increasing order');
  }
  if (!ordered && !isNonDecreasing(x)) {
    const order = Array.from({ length: kept }, (_, i) => i).sort((a, b) => x[a] - x[b] || a - b);
    x = permute(x, order);
    y = permute(y, order);
    given = given ? permute(given, order) : null;
    notes.push('some rows were out of 2θ order; the points were sorted by 2θ');
  }

  let nonPositive = 0;
  let badSigma = 0;
  const pointSigma = new Float64Array(kept);
  for (let i = 0; i < kept; i++) {
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

/** 2θ of a powder pattern lies strictly between 0° and 180° (Bragg's law: 0 < θ < 90°). */
const TWO_THETA_MAX_DEG = 180;
/** A few stray rows (a typo such as "1e9 100") are skipped with a note; more than this many stop the read. */
const MAX_STRAY_ROWS = 5;
const MAX_STRAY_SHARE = 0.01;
/** A point this many median steps away from the rest of the scan is a stray row, not a measurement. */
const STRAY_GAP_STEPS = 200;

/**
 * Rows whose 2θ cannot be a diffraction angle (≤ 0°, ≥ 180°) or that stand far outside the scan (a
 * typo in one row must not stretch the scan to thousands of degrees): a few are skipped with a note
 * that counts them; more are the file's error.
 */
function dropImpossibleAngles(
  x: Float64Array,
  y: Float64Array,
  given: Float64Array | null,
  raw: RawPattern,
  fileName: string,
  notes: string[],
): { x: Float64Array; y: Float64Array; given: Float64Array | null } {
  const n = x.length;
  const bad = new Uint8Array(n);
  let impossible = 0;
  let first = -1;
  for (let i = 0; i < n; i++) {
    if (x[i]! > 0 && x[i]! < TWO_THETA_MAX_DEG) continue;
    bad[i] = 1;
    impossible++;
    if (first < 0) first = i;
  }
  const allowed = Math.max(0, Math.min(MAX_STRAY_ROWS, Math.floor(MAX_STRAY_SHARE * n) || 1));
  if (impossible > allowed) {
    throw new InputError(
      `${impossible} of ${n} rows have a 2θ of ${formatAngle(x[first]!)} or similar, which no diffraction angle can be (it lies between 0 and 180°); check that the first column is 2θ in degrees`,
      { file: fileName, line: raw.lastLine },
    );
  }
  // Stray rows inside 0–180° but far from the scan: more than STRAY_GAP_STEPS median steps from both neighbours.
  // (Typed arrays throughout: this runs on every file read; the order is sorted only when the rows are not.)
  let inside = new Int32Array(n - impossible);
  let ascending = true;
  for (let i = 0, j = 0; i < n; i++) {
    if (bad[i]) continue;
    if (j > 0 && x[i]! < x[inside[j - 1]!]!) ascending = false;
    inside[j++] = i;
  }
  if (!ascending) inside = Int32Array.from(Array.from(inside).sort((a, b) => x[a]! - x[b]!));
  const positiveSteps = new Float64Array(Math.max(0, inside.length - 1));
  let stepCount = 0;
  for (let j = 1; j < inside.length; j++) {
    const d = x[inside[j]!]! - x[inside[j - 1]!]!;
    if (d > 0) positiveSteps[stepCount++] = d;
  }
  const steps = positiveSteps.subarray(0, stepCount).sort();
  const typical = steps.length ? steps[steps.length >> 1]! : 0;
  let stray = 0;
  if (typical > 0) {
    for (let j = 0; j < inside.length; j++) {
      const before = j > 0 ? x[inside[j]!]! - x[inside[j - 1]!]! : Infinity;
      const after = j + 1 < inside.length ? x[inside[j + 1]!]! - x[inside[j]!]! : Infinity;
      if (Math.min(before, after) > STRAY_GAP_STEPS * typical) {
        bad[inside[j]!] = 1;
        stray++;
      }
    }
  }
  const dropped = impossible + stray;
  if (dropped === 0) return { x, y, given };
  if (dropped > allowed) {
    throw new InputError(`${dropped} of ${n} rows lie far outside the scan or outside 0–180° 2θ; check the first column`, { file: fileName, line: raw.lastLine });
  }
  const keep = (values: Float64Array) => values.filter((_, i) => !bad[i]);
  notes.push(`${dropped} row(s) with a 2θ that cannot belong to this scan (outside 0–180° or far beyond the other points) were skipped`);
  return { x: keep(x), y: keep(y), given: given ? keep(given) : null };
}

function formatAngle(value: number): string {
  return Math.abs(value) >= 1e6 || (value !== 0 && Math.abs(value) < 1e-3) ? value.toExponential(2) : String(Number(value.toPrecision(6)));
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
