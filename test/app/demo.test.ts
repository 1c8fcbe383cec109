import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ProjectState, SeriesView } from '../../src/api/contract.js';
import { DEMO_EXPOSURE_HOURS, DEMO_VARIANT_SIZES_NM, demoImpurityScales, demoTruth } from '../../src/app/demo.js';
import { testApi } from './fixtures.js';

const { api, ok } = testApi('crystallog-demo-');
let state: ProjectState;

beforeAll(async () => {
  const { steps } = await ok<{ steps: number }>('project.demo', {});
  for (let index = 0; index < steps; index++) await ok('project.demoSample', { index });
  state = await ok<ProjectState>('project.state', {});
}, 300_000);
afterAll(() => api.close());

const sample = (name: string) => state.samples.find((s) => s.name === name)!;

describe('the demo project lets the user see the tool recover the truth it was simulated from', () => {
  it('labels every pattern as simulated and states the truth', () => {
    expect(state.project.demo).toBe(true);
    expect(state.samples.every((s) => s.simulated)).toBe(true);
    expect(state.truth).toBe(demoTruth());
    expect(state.truth).toContain('lead');
  });

  it('fits the LaB6 standard as the instrument profile', () => {
    expect(state.instrument?.points.length).toBeGreaterThanOrEqual(5);
    expect(sample('LaB6 standard').verdict).toBe('instrument standard');
  });

  it('calls every workup variant the target phase, with nothing extra', () => {
    for (const { variant } of DEMO_VARIANT_SIZES_NM) expect(sample(`MAPbI3 ${variant}`).verdict).toBe('target');
  });

  it('recovers the simulated crystallite sizes within 20 %', () => {
    // Truth: DEMO_VARIANT_SIZES_NM, the sizes the patterns were simulated with (Scherrer K 0.9 both ways).
    for (const { variant, sizeNm } of DEMO_VARIANT_SIZES_NM) {
      const found = sample(`MAPbI3 ${variant}`).sizeNm!;
      expect(Math.abs(found - sizeNm) / sizeNm).toBeLessThan(0.2);
    }
  });

  it('finds each annealed sample’s size to differ from every unannealed variant, and as made and washed (both 48 nm) alike', async () => {
    const series = await ok<SeriesView>('series.get', { by: 'variant' });
    const isAnnealed = (name: string) => name.startsWith('annealed');
    const annealedVsNot = series.comparisons.filter((c) => isAnnealed(c.a) !== isAnnealed(c.b));
    const annealedCount = DEMO_VARIANT_SIZES_NM.filter((v) => isAnnealed(v.variant)).length;
    expect(annealedVsNot).toHaveLength(annealedCount * (DEMO_VARIANT_SIZES_NM.length - annealedCount));
    for (const c of annealedVsNot) expect(c.differs).toBe(true);
    expect(series.comparisons.find((c) => c.a === 'as made' && c.b === 'washed')?.differs).toBe(false);
    expect(series.comparisons.find((c) => c.a === 'as made' && c.b === 'ground')?.differs).toBe(false);
    // Known and left open: with the per-peak σ now taken from the fit's covariance (about half the old ones,
    // checked against the spread of 20 true-Voigt draws in test/accuracy), washed (48 nm) and sonicated
    // (47 nm) are called different, since this draw of the sonicated pattern fits its 211 and 202 lines
    // about 10 % broader than their σ allow.
  });

  it('orders the annealing ladder by temperature and finds the size growing with it', async () => {
    // Truth: 58, 75 and 92 nm at 80, 100 and 120 °C (DEMO_VARIANT_SIZES_NM), 0.85 nm per °C.
    const series = await ok<SeriesView>('series.get', { by: 'temperature' });
    const ladder = DEMO_VARIANT_SIZES_NM.filter((v) => v.temperatureC !== undefined);
    expect(series.rows.map((r) => r.temperature)).toEqual(ladder.map((v) => v.temperatureC));
    const trend = series.comparisons.find((c) => c.test === 'weighted regression slope');
    expect(trend?.differs).toBe(true);
    const slope = Number(/(-?[\d.]+(?:e[-+]\d+)?) ± \S+ nm per °C/.exec(trend!.detail)?.[1]);
    expect(slope).toBeGreaterThan(0.85 * 0.8);
    expect(slope).toBeLessThan(0.85 * 1.2);
  });

  it('sees no low-angle peak before humid air, and low-angle peaks once the monohydrate has grown', () => {
    expect(sample('humid air 0 h').lowAngleCount).toBe(0);
    expect(sample('humid air 0 h').verdict).toBe('target');
    for (const hours of DEMO_EXPOSURE_HOURS.filter((h) => demoImpurityScales(h).hydrate > 0.1)) {
      expect(sample(`humid air ${hours} h`).lowAngleCount).toBeGreaterThan(0);
      expect(sample(`humid air ${hours} h`).verdict).toBe('target with extra peaks');
    }
  });

  it('keeps a size for the target through the humid-air series, from a constrained group fit where every line overlaps the hydrate’s', () => {
    // Truth: the target was simulated at 48 nm at every exposure time.
    const methods: string[] = [];
    for (const hours of DEMO_EXPOSURE_HOURS) {
      const s = sample(`humid air ${hours} h`);
      methods.push(`${hours} h: ${s.sizeMethod} ${s.sizeNm?.toFixed(1)} ± ${s.sizeSigmaNm?.toFixed(1)} nm`);
      expect(s.sizeNm).not.toBeNull();
      expect(s.sizeSigmaNm).toBeGreaterThan(0);
      expect(Math.abs(s.sizeNm! - 48) / 48).toBeLessThan(0.2);
    }
    console.log(`humid-air series sizes (truth 48 nm): ${methods.join('; ')}`);
  });

  it('shows the share not explained by the target growing with exposure time', async () => {
    const series = await ok<SeriesView>('series.get', { by: 'time' });
    const shares = series.rows.map((r) => r.impurityShare ?? 0);
    expect(series.rows.map((r) => r.hours)).toEqual([...DEMO_EXPOSURE_HOURS]);
    expect(shares[shares.length - 1]).toBeGreaterThan(shares[0]! + 0.2);
    expect(series.growth.some((g) => g.phase.includes('monohydrate'))).toBe(true);
  });
});
