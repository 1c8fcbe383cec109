/**
 * The internal standard as a project setting: checked at the door, carried into every analysis, and
 * shown as absolute weight % with σ and the amorphous content; results saved before it was set are
 * marked out of date by name. Wiring only: the accuracy of the numbers is test/accuracy/amorphous.test.ts.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { patternToXyText, simulatePattern } from '../../src/core/crystal/simulate.js';
import type { Reference } from '../../src/core/model/reference.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import type { ApiReply } from '../../src/api/reply.js';
import { b64, SILICON, testApi } from './fixtures.js';

const { api, ok } = testApi('crystallog-standard-');
afterAll(() => api.close());

/** A face-centred cubic test phase, a = 4.20 Å, with a reference intensity ratio so it is quantified. */
const OXIDE: Reference = {
  name: 'test oxide',
  formula: 'MO',
  tags: ['target'],
  source: 'test fixture: made-up cubic cell',
  rir: 2,
  lines: [[1, 1, 1, 60], [2, 0, 0, 100], [2, 2, 0, 55], [3, 1, 1, 20], [2, 2, 2, 15], [4, 0, 0, 8]].map(([h, k, l, intensity]) => ({ d: 4.2 / Math.hypot(h!, k!, l!), intensity: intensity!, hkl: [h!, k!, l!] as [number, number, number] })),
};
const STANDARD: Reference = { ...SILICON, name: 'silicon standard', rir: 4.7 };

function mixtureText(): string {
  const pattern = simulatePattern({
    phases: [
      { lines: OXIDE.lines, scale: 1, sizeNm: 50 },
      { lines: STANDARD.lines, scale: 0.6, sizeNm: 80 },
    ],
    wavelength: anodeWavelength('Cu'),
    twoThetaMinDeg: 15,
    twoThetaMaxDeg: 90,
    stepDeg: 0.02,
    peakCounts: 8000,
    noiseSeed: 31,
    name: 'spiked.xy',
  });
  return patternToXyText(pattern, ['simulated spiked sample for tests']);
}

const errorOf = async (params: unknown): Promise<string> => ((await api.call('project.settings', params)) as Extract<ApiReply, { ok: false }>).error.message;

describe('an internal standard declared for the project', () => {
  let id = 0;
  beforeAll(async () => {
    for (const ref of await ok<Array<{ name: string }>>('library.list', { search: 'silicon' })) await ok('library.remove', { name: ref.name });
    await ok('library.save', { reference: OXIDE });
    await ok('library.save', { reference: STANDARD });
    await ok('project.create', { name: 'Spiked samples' });
    await ok('project.settings', { settings: { target: OXIDE.name } });
    id = (await ok<{ id: number }>('sample.add', { fileName: 'spiked.xy', bytesBase64: b64(mixtureText()) })).id;
  });

  it('is refused without its weight, or when the phase is not in the library, with a sentence', async () => {
    expect(await errorOf({ settings: { internalStandard: STANDARD.name } })).toMatch(/needs both its phase and the weight %/);
    expect(await errorOf({ settings: { internalStandard: 'unobtainium', internalStandardPercent: 10 } })).toMatch(/"unobtainium" is not in the library/);
    expect(await errorOf({ settings: { internalStandard: STANDARD.name, internalStandardPercent: 0 } })).toMatch(/^Internal standard weight must be between 0.1 and 90/);
  });

  it('without one, a sample shows relative weight % and the crystallinity estimate, and no amorphous content', async () => {
    const detail = await ok<{ match: { amorphous?: unknown; phases: Array<{ name: string; weightFraction: number | null }> }; crystallinity: { percent: number } | null }>('sample.get', { id });
    expect(detail.match.amorphous ?? null).toBeNull();
    expect(detail.match.phases.find((p) => p.name === OXIDE.name)?.weightFraction).toBeGreaterThan(0);
    expect(detail.crystallinity?.percent).toBeGreaterThan(50);
  });

  it('once set, marks the earlier result out of date by name, and the next analysis gives absolute fractions with σ and the amorphous content', async () => {
    const state = await ok<{ settings: { internalStandard: string | null; internalStandardPercent: number | null } }>('project.settings', { settings: { internalStandard: STANDARD.name, internalStandardPercent: 20 } });
    expect(state.settings).toMatchObject({ internalStandard: STANDARD.name, internalStandardPercent: 20 });
    const before = await ok<{ stale: boolean; staleReason: string | null }>('sample.get', { id });
    expect(before.stale).toBe(true);
    expect(before.staleReason).toContain('internal standard');
    await ok('sample.reanalyze', { id });
    const after = await ok<{ stale: boolean; match: { amorphous: { fraction: number; sigma: number } | null; phases: Array<{ name: string; absoluteWeightFraction?: number | null; absoluteWeightFractionSigma?: number | null }> } }>('sample.get', { id });
    expect(after.stale).toBe(false);
    const oxide = after.match.phases.find((p) => p.name === OXIDE.name)!;
    expect(oxide.absoluteWeightFraction).toBeGreaterThan(0);
    expect(oxide.absoluteWeightFractionSigma).toBeGreaterThan(0);
    expect(after.match.amorphous).not.toBeNull();
    expect(after.match.amorphous!.sigma).toBeGreaterThan(0);
  });

  it('the report says the composition as the screen does: absolute weight % ± σ and the amorphous content', async () => {
    const report = await ok<{ text: string }>('report.build', { format: 'html' });
    const composition = /<strong>Composition:<\/strong> ([^<]*)<\/p>/.exec(report.text)?.[1] ?? '';
    expect(composition).toMatch(/test oxide \d+(\.\d+)? ± \d+(\.\d+)? wt %/);
    expect(composition).toMatch(/amorphous and unidentified matter -?\d+(\.\d+)? ± \d+(\.\d+)? wt %/);
  });
});
