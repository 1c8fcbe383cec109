/**
 * A temperature series in the app: temperatures read from file names or set on a sample, the series
 * ordered by temperature with a trend test in nm per °C, and the report's figure and CSV column.
 * Wiring only: the trend test's statistics are test/series/series.test.ts and comparison-accuracy.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ExportedFile, SampleSummary, SeriesView } from '../../src/api/contract.js';
import { b64, SILICON, siliconPatternText, testApi } from './fixtures.js';

const { api, ok } = testApi('crystallog-temperature-');
afterAll(() => api.close());

/** Simulated annealing: the crystallites grow with temperature (added out of order on purpose). */
const ANNEALED = [
  { fileName: 'silicon_anneal_150C.xy', sizeNm: 55, seed: 3 },
  { fileName: 'silicon_anneal_25C.xy', sizeNm: 25, seed: 1 },
  { fileName: 'silicon_anneal_200C.xy', sizeNm: 70, seed: 4 },
  { fileName: 'silicon_anneal_100C.xy', sizeNm: 40, seed: 2 },
];

describe('a series ordered by temperature', () => {
  const added: SampleSummary[] = [];
  beforeAll(async () => {
    for (const ref of await ok<Array<{ name: string }>>('library.list', { search: 'silicon' })) await ok('library.remove', { name: ref.name });
    await ok('library.save', { reference: SILICON });
    await ok('project.create', { name: 'Annealing series' });
    await ok('project.settings', { settings: { target: SILICON.name } });
    for (const a of ANNEALED) added.push(await ok<SampleSummary>('sample.add', { fileName: a.fileName, bytesBase64: b64(siliconPatternText({ sizeNm: a.sizeNm, seed: a.seed })) }));
  });

  it('takes each temperature from the file name', () => {
    expect(added.map((s) => s.temperature)).toEqual([150, 25, 200, 100]);
  });

  it('orders the samples by temperature and tests the trend, not all pairs', async () => {
    const view = await ok<SeriesView>('series.get', { by: 'temperature' });
    expect(view.rows.map((r) => r.label)).toEqual(['25 °C', '100 °C', '150 °C', '200 °C']);
    expect(view.rows.map((r) => r.sizeNm)).toEqual([...view.rows.map((r) => r.sizeNm)].sort((a, b) => a! - b!));
    expect(view.comparisons).toHaveLength(1);
    expect(view.comparisons[0]).toMatchObject({ b: 'last (trend over temperature)', differs: true });
    expect(view.comparisons[0]!.detail).toMatch(/nm per °C/);
  });

  it('lets a temperature be set or cleared on a sample, and refuses one below absolute zero', async () => {
    const first = added[0]!;
    const cleared = await ok<SampleSummary>('sample.label', { id: first.id, variant: null, hours: null, temperature: null });
    expect(cleared.temperature).toBeNull();
    expect((await ok<SeriesView>('series.get', { by: 'temperature' })).rows).toHaveLength(3);
    const refused = (await api.call('sample.label', { id: first.id, variant: null, hours: null, temperature: -300 })) as { ok: boolean };
    expect(refused.ok).toBe(false);
    expect((await ok<SampleSummary>('sample.label', { id: first.id, variant: null, hours: null, temperature: 150 })).temperature).toBe(150);
    // Leaving the temperature out keeps it.
    expect((await ok<SampleSummary>('sample.label', { id: first.id, variant: 'annealed', hours: null })).temperature).toBe(150);
  });

  it('puts the temperature series in the report: a figure and a CSV column', async () => {
    const html = (await ok<ExportedFile>('report.build', { format: 'html' })).text!;
    expect(html).toContain('By temperature');
    expect(html).toContain('150 °C');
    const csv = (await ok<ExportedFile>('report.build', { format: 'csv' })).text!.split('\n').filter((l) => !l.startsWith('#'));
    const header = csv[0]!.split(',');
    const column = header.indexOf('temperature_c');
    expect(column).toBeGreaterThan(0);
    const values = csv.slice(1).filter(Boolean).map((l) => l.split(',')[column]);
    expect(values.sort()).toEqual(['100', '150', '200', '25']);
  });
});
