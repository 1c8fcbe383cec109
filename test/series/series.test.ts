import { describe, expect, it } from 'vitest';
import { normalDeviate, seededUniform } from '../../src/core/numeric/random.js';
import { InputError } from '../../src/core/errors.js';
import { twoThetaFromD } from '../../src/core/model/units.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { analyzeSeries, exposureHoursFromLabel, temperatureCFromLabel, type SeriesSample } from '../../src/core/series/series.js';
import { crystalliteSizes, type SizeOptions } from '../../src/core/size/sizes.js';
import { broadenedProfile, CU_KA1, cubicPhase, fittedPeak, typicalInstrumentProfile } from '../size/fixtures.js';

const CU = anodeWavelength('Cu');
const phase = cubicPhase();
const instrument = typicalInstrumentProfile();

/** A sample whose fitted widths scatter by their stated 1 % uncertainty (seeded). */
function sample(label: string, sizeNm: number, seed: number, extra: Partial<SeriesSample> = {}, options: Partial<SizeOptions> = {}): SeriesSample {
  const uniform = seededUniform(seed);
  const peaks = phase.lines.map((l) => {
    const tt = twoThetaFromD(l.d, CU_KA1);
    const p = broadenedProfile(tt, sizeNm);
    return fittedPeak(tt, p.fwhm * (1 + 0.01 * normalDeviate(uniform)), Math.min(1, Math.max(0, p.eta + 0.02 * normalDeviate(uniform))));
  });
  return {
    label,
    file: `${label}.xy`,
    verdict: 'present',
    lowAnglePeaks: [],
    otherPhases: [],
    size: crystalliteSizes(peaks, { wavelength: CU, instrument, phase, ...options }),
    references: [{ name: phase.name, version: 1 }],
    ...extra,
  };
}

describe('series of workup variants', () => {
  it('reports three variants of the same size as not differing, and says which test', () => {
    const r = analyzeSeries([sample('as made', 30, 1), sample('ground', 30, 2), sample('washed', 30, 3)]);
    expect(r.kind).toBe('workup');
    expect(r.rows.map((row) => row.label)).toEqual(['as made', 'ground', 'washed']);
    expect(r.comparison.pairs).toHaveLength(3);
    expect(r.comparison.pairs.every((p) => p.testable && p.differs === false)).toBe(true);
    expect(r.comparison.test).toMatch(/z-test/);
    expect(r.cautions.join(' ')).toMatch(/microscopy/);
  });

  it('reports 20 nm and 40 nm as differing', () => {
    const r = analyzeSeries([sample('small', 20, 4), sample('large', 40, 5)]);
    expect(r.comparison.pairs[0].differs).toBe(true);
  });

  it('records the one set of settings and the reference versions used', () => {
    const r = analyzeSeries([sample('a', 30, 1), sample('b', 30, 2)]);
    expect(r.settings.instrument?.name).toBe(instrument.name);
    expect(r.settings.k).toBe(0.9);
    expect(r.references).toEqual([{ name: phase.name, version: 1 }]);
  });

  it('refuses samples analysed with different settings', () => {
    expect(() => analyzeSeries([sample('a', 30, 1), sample('b', 30, 2, {}, { k: 0.94 })])).toThrow(InputError);
    expect(() => analyzeSeries([sample('a', 30, 1), sample('a', 30, 2)])).toThrow(/twice/);
  });
});

describe('series over exposure time', () => {
  it('fits the growth of an impurity share and gives its half-time', () => {
    const hours = [0, 0.5, 1, 2, 4, 8, 24];
    const uniform = seededUniform(99);
    const samples = hours.map((t, i) => {
      const share = 0.3 * (1 - Math.exp(-(Math.LN2 / 2) * t)) + 0.004 * normalDeviate(uniform);
      return sample(`${t} h`, 30, 10 + i, {
        exposureHours: exposureHoursFromLabel(`${t} h`),
        otherPhases: t === 0 ? [] : [{ name: 'hydrate', share, basis: 'weight fraction' as const }],
      });
    });
    const r = analyzeSeries(samples);
    expect(r.kind).toBe('exposure');
    const growth = r.growth.find((g) => g.phase === 'hydrate')!;
    expect(growth.analysis.supported).toBe(true);
    const fit = growth.analysis.fit!;
    expect(Math.abs(fit.halfTimeHours - 2)).toBeLessThan(Math.max(3 * fit.halfTimeSigmaHours, 0.3));
  });

  it('reads exposure times from labels', () => {
    expect(exposureHoursFromLabel('30 min')).toBe(0.5);
    expect(exposureHoursFromLabel('2h')).toBe(2);
    expect(exposureHoursFromLabel('1,5 d')).toBe(36);
    expect(exposureHoursFromLabel('washed')).toBeNull();
  });
});

describe('series over temperature', () => {
  // Annealing grows crystallites: 30 → 60 nm over 25–200 °C is a clear trend; a flat series is not.
  const temperatures = [25, 80, 120, 160, 200];
  const annealed = (sizeAt: (t: number) => number, seed: number) =>
    temperatures.map((t, i) => sample(`${t} °C`, sizeAt(t), seed + i, { temperatureC: temperatureCFromLabel(`${t} °C`) }));

  it('is ordered by temperature and tested for a trend per °C, not by all pairs', () => {
    const r = analyzeSeries(annealed((t) => 30 + (30 * (t - 25)) / 175, 40));
    expect(r.kind).toBe('temperature');
    expect(r.rows.map((row) => row.temperatureC)).toEqual(temperatures);
    expect(r.comparison.pairs).toHaveLength(0);
    expect(r.growth).toHaveLength(0);
    const trend = r.comparison.trend!;
    expect(trend.differs).toBe(true);
    // The true slope is 30 nm / 175 °C = 0.171 nm/°C; the fitted one must carry it within 3σ.
    expect(Math.abs(trend.slopeNmPerUnit - 30 / 175)).toBeLessThan(3 * trend.slopeSigma);
    expect(trend.statement).toMatch(/nm per °C/);
  });

  it('finds no trend in a series annealed without growth', () => {
    const r = analyzeSeries(annealed(() => 40, 60));
    expect(r.kind).toBe('temperature');
    expect(r.comparison.trend!.differs).toBe(false);
  });

  it('treats a series where only some samples have a temperature as workup variants, and says so', () => {
    const samples = annealed(() => 40, 80);
    samples[2] = { ...samples[2]!, temperatureC: null };
    const r = analyzeSeries(samples);
    expect(r.kind).toBe('workup');
    expect(r.warnings.join(' ')).toMatch(/only some samples have a temperature/);
  });

  it('reads temperatures from labels in °C or K, and nothing from other labels', () => {
    expect(temperatureCFromLabel('150 °C')).toBe(150);
    expect(temperatureCFromLabel('150C')).toBe(150);
    expect(temperatureCFromLabel('80 degC')).toBe(80);
    expect(temperatureCFromLabel('423.15 K')).toBeCloseTo(150, 10);
    expect(temperatureCFromLabel('-20 °C')).toBe(-20);
    expect(temperatureCFromLabel('annealed')).toBeNull();
    expect(temperatureCFromLabel('2 h')).toBeNull();
    expect(temperatureCFromLabel('-300 °C')).toBeNull();
  });
});
