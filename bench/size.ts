/**
 * Size-module speed on simulated patterns (Cu Kα1/Kα2, 0.01° steps): the instrument profile from a
 * silicon standard, the sizes of one pattern, and a 50-sample series. Fixed seeds.
 */
import { simulatePattern } from '../src/core/crystal/simulate.js';
import type { ReferenceLine } from '../src/core/model/reference.js';
import { anodeWavelength } from '../src/core/model/wavelengths.js';
import { findPeaks } from '../src/core/process/peaks.js';
import type { FittedPeak } from '../src/core/model/peak.js';
import { analyzeSeries, type SeriesSample } from '../src/core/series/series.js';
import { fitInstrumentProfile } from '../src/core/size/instrument.js';
import { crystalliteSizes } from '../src/core/size/sizes.js';
import { cubicPhase, siliconStandard } from '../test/size/fixtures.js';
import { timeStats, type BenchRow } from './types.js';

const CU = anodeWavelength('Cu');
const SERIES_SAMPLES = 50;

function measure(name: string, repeats: number, work: () => void, target?: string, note?: string): BenchRow {
  const times: number[] = [];
  for (let i = 0; i < repeats; i++) {
    const t0 = performance.now();
    work();
    times.push(performance.now() - t0);
  }
  const row: BenchRow = { name, ...timeStats(times) };
  if (target) row.target = target;
  if (note) row.note = note;
  return row;
}

export async function run(): Promise<BenchRow[]> {
  const standard = siliconStandard();
  const standardPattern = simulatePattern({ phases: [{ lines: standard.lines, scale: 1 }], wavelength: CU, twoThetaMinDeg: 20, twoThetaMaxDeg: 120, stepDeg: 0.01, peakCounts: 20000, noiseSeed: 1 });
  const standardPeaks = findPeaks(standardPattern, { wavelength: CU }).peaks;
  const instrument = fitInstrumentProfile(standardPeaks, standard, { wavelength: CU, name: 'bench' });
  const phase = cubicPhase();
  const lines: ReferenceLine[] = phase.lines.map((l, i) => ({ ...l, intensity: 100 / (1 + i) }));
  const sizePhase = { name: phase.name, version: 1, lines };
  const patterns = Array.from({ length: SERIES_SAMPLES }, (_, i) =>
    simulatePattern({ phases: [{ lines, scale: 1, sizeNm: 30 + (i % 5) }], wavelength: CU, twoThetaMinDeg: 15, twoThetaMaxDeg: 115, stepDeg: 0.01, peakCounts: 10000, noiseSeed: 100 + i }),
  );
  const peakLists: FittedPeak[][] = patterns.map((p) => findPeaks(p, { wavelength: CU }).peaks);
  const sizes = (peaks: FittedPeak[]) => crystalliteSizes(peaks, { wavelength: CU, instrument, phase: sizePhase });
  const series = (lists: FittedPeak[][]) =>
    analyzeSeries(
      lists.map((peaks, i): SeriesSample => ({ label: `sample ${i + 1}`, file: `sample-${i + 1}`, verdict: 'present', lowAnglePeaks: [], otherPhases: [], size: sizes(peaks) })),
    );

  return [
    measure('instrument profile: fit of fitted standard peaks', 20, () => fitInstrumentProfile(standardPeaks, standard, { wavelength: CU, name: 'bench' }), '< 100 ms'),
    measure('instrument profile: peak search + fit (10 001 points)', 3, () => fitInstrumentProfile(findPeaks(standardPattern, { wavelength: CU }).peaks, standard, { wavelength: CU, name: 'bench' }), '< 100 ms', 'includes findPeaks'),
    measure('sizes of one pattern from its fitted peaks', 20, () => sizes(peakLists[0]), '< 20 ms'),
    measure('series of 50 samples from fitted peaks (sizes + comparisons)', 5, () => series(peakLists), '< 2 s'),
    measure('series of 50 samples including peak search', 1, () => series(patterns.map((p) => findPeaks(p, { wavelength: CU }).peaks)), '< 2 s', 'findPeaks dominates'),
  ];
}
