/**
 * Simulated perovskite patterns like the demo project's (methylammonium lead iodide, its monohydrate,
 * lead iodide; LaB6 as the line-profile standard): the seed references, Cu Kα1/Kα2, 5–60° 2θ in
 * 0.01° steps, a typical lab instrument and Poisson noise. Simulated, not measured.
 */
import { simulatePattern, TYPICAL_LAB_INSTRUMENT, type SimulatedPhase } from '../../src/core/crystal/simulate.js';
import { analyzePattern, createAnalysisContext, type AnalysisContext, type AnalysisResult } from '../../src/core/analysis/analyse.js';
import type { StoredReference } from '../../src/core/model/reference.js';
import { loadSeedReferences } from '../../src/node/library/seed.js';
import type { Pattern } from '../../src/core/model/pattern.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { findPeaks } from '../../src/core/process/peaks.js';
import { fitInstrumentProfile, type InstrumentProfile } from '../../src/core/size/instrument.js';

export const CU = anodeWavelength('Cu');
export const TARGET = 'methylammonium lead iodide';
export const HYDRATE = 'methylammonium lead iodide monohydrate';
export const LEAD_IODIDE = 'lead iodide';
export const STANDARD = 'lanthanum hexaboride';

export const references: StoredReference[] = loadSeedReferences().map((r, i) => ({ ...r, id: i + 1, version: 1, createdAt: '2025-01-01T00:00:00Z' }));
const byName = new Map(references.map((r) => [r.name, r]));

export function reference(name: string): StoredReference {
  const r = byName.get(name);
  if (!r) throw new Error(`no seed reference "${name}"`);
  return r;
}

export function simulate(phases: SimulatedPhase[], seed: number, range = { twoThetaMinDeg: 5, twoThetaMaxDeg: 60 }): Pattern {
  return simulatePattern({ phases, wavelength: CU, ...range, stepDeg: 0.01, instrument: TYPICAL_LAB_INSTRUMENT, peakCounts: 6000, noiseSeed: seed, name: `simulated-${seed}` });
}

/** The instrument profile from a simulated LaB6 standard, 10–100° 2θ, as the demo measures it. */
export function standardProfile(): InstrumentProfile {
  const pattern = simulate([{ lines: reference(STANDARD).lines, scale: 1 }], 301, { twoThetaMinDeg: 10, twoThetaMaxDeg: 100 });
  return fitInstrumentProfile(findPeaks(pattern, { wavelength: CU }).peaks, reference(STANDARD), { wavelength: CU, name: 'LaB6 (simulated)' });
}

export function perovskiteContext(instrument: InstrumentProfile | null): AnalysisContext {
  return createAnalysisContext(references, instrument, { target: TARGET, wavelength: CU });
}

/**
 * Line scales for given weight fractions: with reference intensities scaled to 100 for the strongest
 * line, the integrated intensity of a phase's strongest line is ∝ RIR·w (Chung, J. Appl. Cryst. 7, 519 (1974)).
 */
export function scalesForWeightFractions(fractions: Record<string, number>): Record<string, number> {
  const out: Record<string, number> = {};
  for (const [name, w] of Object.entries(fractions)) out[name] = w * (reference(name).rir as number);
  return out;
}

/** A target sample with a given weight fraction of monohydrate (and lead iodide), crystallite sizes as in the demo. */
export function exposureSample(hydrateFraction: number, leadIodideFraction: number, seed: number, context: AnalysisContext): AnalysisResult {
  const scales = scalesForWeightFractions({ [TARGET]: 1 - hydrateFraction - leadIodideFraction, [HYDRATE]: hydrateFraction, [LEAD_IODIDE]: leadIodideFraction });
  const phases: SimulatedPhase[] = [{ lines: reference(TARGET).lines, scale: scales[TARGET], sizeNm: 48 }];
  if (hydrateFraction > 0) phases.push({ lines: reference(HYDRATE).lines, scale: scales[HYDRATE], sizeNm: 30 });
  if (leadIodideFraction > 0) phases.push({ lines: reference(LEAD_IODIDE).lines, scale: scales[LEAD_IODIDE], sizeNm: 40 });
  return analyzePattern(simulate(phases, seed), context);
}
