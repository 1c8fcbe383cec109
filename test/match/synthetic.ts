/** Synthetic peak lists and references for the matcher's unit tests (no simulation, no peak search). */
import type { ReferenceLine, StoredReference } from '../../src/core/model/reference.js';
import type { FittedPeak } from '../../src/core/model/peak.js';
import { DEG_TO_RAD, dFromTwoTheta, twoThetaFromD } from '../../src/core/model/units.js';

let nextId = 1;

export function stored(name: string, lines: ReferenceLine[], extra: Partial<StoredReference> = {}): StoredReference {
  return { name, formula: name, tags: [], source: 'synthetic test reference', lines, id: nextId++, version: 1, createdAt: '2000-01-01T00:00:00.000Z', ...extra };
}

/** Lines from (2θ for Cu Kα1, intensity) pairs. */
export function linesAt(lambda: number, pairs: Array<[number, number]>): ReferenceLine[] {
  return pairs.map(([tt, intensity]) => ({ d: dFromTwoTheta(tt, lambda), intensity }));
}

export function peak(twoTheta: number, area: number, lambda: number, fwhm = 0.08): FittedPeak {
  const breadth = 1.3 * fwhm;
  return {
    twoTheta,
    twoThetaSigma: 0.001,
    d: dFromTwoTheta(twoTheta, lambda),
    height: area / breadth,
    heightSigma: 1,
    area,
    areaSigma: 1,
    fwhm,
    fwhmSigma: 0.001,
    integralBreadth: breadth,
    integralBreadthSigma: 0.001,
    eta: 0.5,
    etaSigma: 0.01,
    group: 0,
    groupChi2: 1,
    overlapped: false,
  };
}

export interface PhaseInMix {
  lines: ReferenceLine[];
  /** Area per unit reference intensity. */
  scale: number;
}

/**
 * The peaks a perfect peak search would report for a mixture: one peak per line above `minArea`,
 * shifted by zero + displacement·cosθ; lines closer than `mergeDeg` merge into one peak (area summed).
 */
export function peaksOf(
  phases: PhaseInMix[],
  lambda: number,
  options: { zeroDeg?: number; displacementCosDeg?: number; minArea?: number; mergeDeg?: number; rangeDeg?: [number, number] } = {},
): FittedPeak[] {
  const raw: Array<{ tt: number; area: number }> = [];
  for (const phase of phases) {
    for (const line of phase.lines) {
      const tt0 = twoThetaFromD(line.d, lambda);
      if (!Number.isFinite(tt0)) continue;
      const tt = tt0 + (options.zeroDeg ?? 0) + (options.displacementCosDeg ?? 0) * Math.cos((tt0 / 2) * DEG_TO_RAD);
      const range = options.rangeDeg ?? [5, 90];
      if (tt < range[0] || tt > range[1]) continue;
      raw.push({ tt, area: (line.intensity ?? 10) * phase.scale });
    }
  }
  raw.sort((a, b) => a.tt - b.tt);
  const merged: Array<{ tt: number; area: number }> = [];
  for (const r of raw) {
    const last = merged[merged.length - 1];
    if (last && r.tt - last.tt < (options.mergeDeg ?? 0.03)) {
      last.tt = (last.tt * last.area + r.tt * r.area) / (last.area + r.area);
      last.area += r.area;
    } else merged.push({ ...r });
  }
  return merged.filter((m) => m.area >= (options.minArea ?? 0)).map((m) => peak(m.tt, m.area, lambda));
}

/** A flat background of `counts` over a 2θ range. */
export function flatBackground(counts: number, from = 5, to = 90): { x: Float64Array; y: Float64Array } {
  return { x: Float64Array.from([from, to]), y: Float64Array.from([counts, counts]) };
}
