/**
 * Figures for the report as inline SVG (no scripts, no outside files): a sample's pattern with its
 * model, the difference below it and a mark under each fitted peak in the colour of the phase that
 * explains it (unexplained peaks marked apart). Axes carry round tick values.
 */

import { axisScale, niceTicks } from '../model/ticks.js';

export interface PatternFigure {
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  model: ArrayLike<number> | null;
  background: ArrayLike<number> | null;
  peaks: Array<{ twoTheta: number; phase: string | null; lowAngle: boolean }>;
}

/** Our own palette for phases in figures (colour-blind-safe order, after Okabe & Ito 2008, from memory). */
export const PHASE_COLOURS = ['#0072b2', '#009e73', '#cc79a7', '#e69f00', '#56b4e9', '#d55e00', '#6a3d9a', '#8c6d31'];
const OBSERVED = '#2b2f33';
const MODEL = '#d55e00';
const DIFFERENCE = '#6b7780';
const UNEXPLAINED = '#b2182b';

const esc = (text: string): string => text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);

/** At most `buckets` × 2 points: the minimum and maximum of each bucket keep every peak's top. */
function decimate(x: ArrayLike<number>, series: Array<ArrayLike<number>>, buckets: number): { x: number[]; series: number[][] } {
  const n = x.length;
  if (n <= 2 * buckets) return { x: Array.from(x), series: series.map((s) => Array.from(s)) };
  const outX: number[] = [];
  const out = series.map(() => [] as number[]);
  const y = series[0]!;
  for (let b = 0; b < buckets; b++) {
    const from = Math.floor((b * n) / buckets);
    const to = Math.floor(((b + 1) * n) / buckets);
    let lo = from;
    let hi = from;
    for (let i = from; i < to; i++) {
      if (y[i]! < y[lo]!) lo = i;
      if (y[i]! > y[hi]!) hi = i;
    }
    for (const i of lo < hi ? [lo, hi] : [hi, lo]) {
      outX.push(x[i]!);
      series.forEach((s, k) => out[k]!.push(s[i]!));
    }
  }
  return { x: outX, series: out };
}

function path(xs: number[], ys: number[], xAt: (v: number) => number, yAt: (v: number) => number): string {
  return xs.map((x, i) => `${i === 0 ? 'M' : 'L'}${xAt(x).toFixed(1)} ${yAt(ys[i]!).toFixed(1)}`).join('');
}

/** The pattern figure of one sample: observed, model, difference, and peak marks by phase, with a legend. */
export function patternFigureSvg(figure: PatternFigure, title: string): string {
  const width = 680;
  const height = 300;
  const left = 60;
  const right = 12;
  const top = 10;
  const diffHeight = 46;
  const marksHeight = 22;
  const bottom = 36;
  const plotBottom = height - bottom - diffHeight - marksHeight;
  const n = figure.x.length;
  if (n < 2) return '';
  const model = figure.model ?? figure.y;
  const diff = Array.from(figure.y, (v, i) => v - (model[i] ?? v));
  const { x, series } = decimate(figure.x, [figure.y, model, diff], 700);
  const [ys, ms, ds] = series as [number[], number[], number[]];
  const x0 = x[0]!;
  const x1 = x[x.length - 1]!;
  const yMax = Math.max(...ys, ...ms) * 1.05;
  const yMin = Math.min(0, ...ys);
  const dAbs = Math.max(1e-9, ...ds.map(Math.abs));
  const xAt = (v: number) => left + ((v - x0) / (x1 - x0)) * (width - left - right);
  const yAt = (v: number) => top + (1 - (v - yMin) / (yMax - yMin)) * (plotBottom - top);
  const diffMid = plotBottom + marksHeight + diffHeight / 2;
  const dAt = (v: number) => diffMid - (v / dAbs) * (diffHeight / 2 - 2);
  const phases = [...new Set(figure.peaks.map((p) => p.phase).filter((p): p is string => p !== null))];
  const colourOf = (phase: string | null) => (phase === null ? UNEXPLAINED : PHASE_COLOURS[phases.indexOf(phase) % PHASE_COLOURS.length]!);
  const parts: string[] = [`<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${width} ${height}" width="${width}" height="${height}" font-size="10" font-family="system-ui,sans-serif" role="img" aria-label="${esc(title)}">`];
  parts.push(`<rect x="${left}" y="${top}" width="${width - left - right}" height="${plotBottom - top}" fill="none" stroke="#c9cdd1"/>`);
  for (const t of niceTicks(x0, x1, 8)) {
    parts.push(`<line x1="${xAt(t)}" y1="${height - bottom}" x2="${xAt(t)}" y2="${height - bottom + 4}" stroke="#24313a"/><text x="${xAt(t)}" y="${height - bottom + 15}" text-anchor="middle">${t}</text>`);
  }
  parts.push(`<text x="${(left + width - right) / 2}" y="${height - 4}" text-anchor="middle">2θ (degrees)</text>`);
  for (const t of niceTicks(yMin, yMax, 4)) parts.push(`<text x="${left - 6}" y="${yAt(t) + 3}" text-anchor="end">${t}</text>`);
  parts.push(`<text transform="translate(12 ${(top + plotBottom) / 2}) rotate(-90)" text-anchor="middle">intensity (counts)</text>`);
  parts.push(`<path d="${path(x, ys, xAt, yAt)}" fill="none" stroke="${OBSERVED}" stroke-width="0.8"/>`);
  if (figure.model) parts.push(`<path d="${path(x, ms, xAt, yAt)}" fill="none" stroke="${MODEL}" stroke-width="0.8" stroke-dasharray="3 2"/>`);
  const marksTop = plotBottom + 4;
  for (const p of figure.peaks) {
    if (p.twoTheta < x0 || p.twoTheta > x1) continue;
    const px = xAt(p.twoTheta).toFixed(1);
    const colour = colourOf(p.phase);
    parts.push(`<line x1="${px}" y1="${marksTop}" x2="${px}" y2="${marksTop + 12}" stroke="${colour}" stroke-width="${p.phase === null ? 2 : 1.4}"/>`);
    if (p.phase === null) parts.push(`<text x="${px}" y="${marksTop + 20}" text-anchor="middle" fill="${colour}">${p.lowAngle ? '?!' : '?'}</text>`);
  }
  parts.push(`<line x1="${left}" y1="${diffMid}" x2="${width - right}" y2="${diffMid}" stroke="#dfe2e5"/>`);
  parts.push(`<path d="${path(x, ds, xAt, dAt)}" fill="none" stroke="${DIFFERENCE}" stroke-width="0.7"/>`);
  parts.push(`<text x="${left + 4}" y="${plotBottom + marksHeight + 9}" fill="${DIFFERENCE}">obs − model</text>`);
  parts.push('</svg>');
  // The legend in HTML below the figure, so that long phase names wrap instead of running off.
  const legend: Array<[string, string]> = [['observed', OBSERVED], ...(figure.model ? ([['model', MODEL]] as Array<[string, string]>) : []), ['obs − model', DIFFERENCE], ...phases.map((p): [string, string] => [`peaks of ${p}`, colourOf(p)])];
  if (figure.peaks.some((p) => p.phase === null)) legend.push(['unexplained peak (?! below the target’s first line)', UNEXPLAINED]);
  const key = legend.map(([label, colour]) => `<span class="key"><span class="swatch" style="background:${colour}"></span>${esc(label)}</span>`).join(' ');
  return `<figure class="pattern">${parts.join('')}<figcaption>${esc(title)} — ${key}</figcaption></figure>`;
}

/** A sample's Halder–Wagner plot: y = (β* / d*)² against x = β* / d*² (Å) with the fitted line y = slope·x + intercept. */
export interface SizeStrainFigure {
  points: Array<{ twoTheta: number; x: number; y: number; sigmaY: number }>;
  slope: number;
  intercept: number;
  statement: string;
  convention: string;
}

/** The size–strain plot of one sample: points with ± σ bars, the fitted line, round ticks, axes with units. */
export function sizeStrainFigureSvg(figure: SizeStrainFigure, title: string): string {
  if (figure.points.length < 2) return '';
  const width = 420;
  const height = 250;
  const left = 62;
  const right = 14;
  const top = 12;
  const bottom = 42;
  const xs = figure.points.map((p) => p.x);
  const ys = figure.points.flatMap((p) => [p.y - p.sigmaY, p.y + p.sigmaY]);
  const xMax = Math.max(...xs) * 1.08;
  const lineAt = (x: number): number => figure.intercept + figure.slope * x;
  const yMax = Math.max(...ys, lineAt(0), lineAt(xMax)) * 1.08;
  const yMin = Math.min(0, ...ys, lineAt(0), lineAt(xMax));
  const xScale = axisScale(xMax);
  const yScale = axisScale(Math.max(Math.abs(yMin), yMax));
  const xAt = (v: number): number => left + (v / xMax) * (width - left - right);
  const yAt = (v: number): number => top + (1 - (v - yMin) / (yMax - yMin)) * (height - top - bottom);
  const f = (v: number): string => v.toFixed(1);
  const parts: string[] = [`<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${width} ${height}" width="${width}" height="${height}" font-size="10" font-family="system-ui,sans-serif" role="img" aria-label="${esc(title)}">`];
  parts.push(`<rect x="${left}" y="${top}" width="${width - left - right}" height="${height - top - bottom}" fill="none" stroke="#c9cdd1"/>`);
  for (const t of niceTicks(0, xMax * xScale.factor, 5)) {
    const x = f(xAt(t / xScale.factor));
    parts.push(`<line x1="${x}" y1="${height - bottom}" x2="${x}" y2="${height - bottom + 4}" stroke="#24313a"/><text x="${x}" y="${height - bottom + 15}" text-anchor="middle">${t}</text>`);
  }
  for (const t of niceTicks(yMin * yScale.factor, yMax * yScale.factor, 4)) {
    const y = f(yAt(t / yScale.factor));
    parts.push(`<line x1="${left - 4}" y1="${y}" x2="${left}" y2="${y}" stroke="#24313a"/><text x="${left - 6}" y="${Number(y) + 3}" text-anchor="end">${t}</text>`);
  }
  parts.push(`<text x="${(left + width - right) / 2}" y="${height - 6}" text-anchor="middle">β*/d*² (Å)${esc(xScale.note)}</text>`);
  parts.push(`<text transform="translate(14 ${(top + height - bottom) / 2}) rotate(-90)" text-anchor="middle">(β*/d*)² (no unit)${esc(yScale.note)}</text>`);
  // The fitted line, clipped to the frame where it would leave it below yMin.
  parts.push(`<line x1="${f(xAt(0))}" y1="${f(yAt(Math.max(yMin, lineAt(0))))}" x2="${f(xAt(xMax))}" y2="${f(yAt(Math.max(yMin, lineAt(xMax))))}" stroke="${MODEL}" stroke-width="1.2"/>`);
  for (const p of figure.points) {
    const x = f(xAt(p.x));
    parts.push(`<line x1="${x}" y1="${f(yAt(p.y - p.sigmaY))}" x2="${x}" y2="${f(yAt(p.y + p.sigmaY))}" stroke="${PHASE_COLOURS[0]}"/>`);
    parts.push(`<circle cx="${x}" cy="${f(yAt(p.y))}" r="3.5" fill="${PHASE_COLOURS[0]}"><title>${p.twoTheta.toFixed(2)}° 2θ</title></circle>`);
  }
  parts.push('</svg>');
  const key = `<span class="key"><span class="swatch" style="background:${PHASE_COLOURS[0]}"></span>reflections (± σ)</span> <span class="key"><span class="swatch" style="background:${MODEL}"></span>fitted line</span>`;
  return `<figure class="size-strain">${parts.join('')}<figcaption>${esc(title)}: ${esc(figure.statement)} — ${key}<br>${esc(figure.convention)}</figcaption></figure>`;
}
