import { existsSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createAppApi } from '../../src/app/api.js';
import type { ApiReply } from '../../src/api/reply.js';
import { b64, SILICON, siliconPatternText, testApi } from './fixtures.js';

const { dataDir, api, ok } = testApi();

afterAll(() => api.close());

describe('the app API checks every input at the door', () => {
  it('answers an unknown request with a sentence, not a trace', async () => {
    const reply = await api.call('project.drop-all', {});
    expect(reply).toEqual({ ok: false, error: { kind: 'input', message: 'Crystallog has no request called "project.drop-all".' } });
  });

  it('rejects parameters of the wrong shape, naming the field', async () => {
    const reply = (await api.call('sample.get', { id: 'one' })) as Extract<ApiReply, { ok: false }>;
    expect(reply.ok).toBe(false);
    expect(reply.error.kind).toBe('input');
    expect(reply.error.message).toMatch(/^Id: /);
    expect(reply.error.message).not.toMatch(/at .*\.ts/);
  });

  it('rejects fields it does not know (strict objects)', async () => {
    const reply = await api.call('project.create', { name: 'x', admin: true });
    expect(reply.ok).toBe(false);
  });

  it('says to open a project before adding samples', async () => {
    const reply = (await api.call('sample.add', { fileName: 'a.xy', bytesBase64: b64('10 1\n') })) as Extract<ApiReply, { ok: false }>;
    expect(reply.error.message).toMatch(/no project is open/i);
  });
});

describe('a project from drop to report', () => {
  let sampleId = 0;
  beforeAll(async () => {
    // The seed library ships a silicon too; the test keeps only its own, so no two references claim the same peaks.
    const seeded = await ok<Array<{ name: string }>>('library.list', { search: 'silicon' });
    for (const ref of seeded) await ok('library.remove', { name: ref.name });
    await ok('library.save', { reference: SILICON });
    await ok('project.create', { name: 'Silicon checks' });
    await ok('project.settings', { settings: { target: SILICON.name } });
  });

  it('analyses a dropped pattern: target verdict and a size', async () => {
    const summary = await ok<{ id: number; verdict: string; sizeNm: number | null }>('sample.add', { fileName: 'si_washed.xy', bytesBase64: b64(siliconPatternText()) });
    sampleId = summary.id;
    expect(summary.verdict).toBe('target');
    expect(summary.sizeNm).not.toBeNull();
  });

  it('guesses the workup variant from the file name', async () => {
    const state = await ok<{ samples: Array<{ id: number; variant: string | null }> }>('project.state', {});
    expect(state.samples.find((s) => s.id === sampleId)?.variant).toBe('washed');
  });

  it('flags an extra line below the target’s first line as low-angle', async () => {
    // d = 10.4 Å puts a line near 8.5° 2θ (Cu Kα1), well below silicon 111 at 28.4°.
    const summary = await ok<{ verdict: string; lowAngleCount: number }>('sample.add', { fileName: 'si_air_24h.xy', bytesBase64: b64(siliconPatternText({ extraLowAngleD: 10.4, seed: 9 })) });
    expect(summary.lowAngleCount).toBeGreaterThan(0);
    expect(summary.verdict).toBe('target with extra peaks');
  });

  it('refuses a malformed file with a readable message and keeps nothing', async () => {
    const before = (await ok<{ samples: unknown[] }>('project.state', {})).samples.length;
    const reply = (await api.call('sample.add', { fileName: 'broken.xy', bytesBase64: b64('2theta counts\n10.0 12\n10.1 banana\n') })) as Extract<ApiReply, { ok: false }>;
    expect(reply.ok).toBe(false);
    expect(reply.error.kind).toBe('input');
    expect(reply.error.message).toMatch(/broken\.xy/);
    expect((await ok<{ samples: unknown[] }>('project.state', {})).samples.length).toBe(before);
  });

  it('returns the pattern, fit and peaks of a sample for drawing', async () => {
    const detail = await ok<{ points: number; x: string; model: string | null; peaks: unknown[] }>('sample.get', { id: sampleId });
    expect(detail.points).toBe(6001);
    expect(Buffer.from(detail.x, 'base64').length).toBe(6001 * 4);
    expect(detail.model).not.toBeNull();
    expect(detail.peaks.length).toBeGreaterThanOrEqual(5);
  });

  it('keeps the project on disk: a new API over the same folder sees the samples', async () => {
    const again = createAppApi({ mode: 'browser', dataDir });
    const reply = await again.call('project.state', {});
    again.close();
    expect(reply.ok && (reply.result as { samples: unknown[] }).samples.length).toBe(2);
  });

  it('writes an HTML report with settings, reference versions, app version and cautions', async () => {
    const file = await ok<{ fileName: string; text: string }>('report.build', { format: 'html' });
    expect(file.fileName).toMatch(/\.html$/);
    expect(file.text).toContain('matching tolerance');
    expect(file.text).toMatch(/silicon test<\/td><td>1</);
    expect(file.text).toContain('Crystallog 0.1.0');
    expect(file.text).toContain('below the detection limit');
    expect(file.text).not.toMatch(/<script/i);
  });

  it('puts each sample’s pattern with fit, difference and peak marks in the report, and each caution once', async () => {
    const file = await ok<{ fileName: string; text: string }>('report.build', { format: 'html' });
    expect(file.text).toMatch(/<figure class="pattern"><svg[^>]*aria-label="si_washed/);
    expect(file.text).toContain('peaks of silicon test');
    expect(file.text).toContain('@page{size:A4');
    const cautions = [...file.text.matchAll(/<p class="caution">([^<]*)<\/p>/g)].map((m) => m[1]);
    expect(cautions.length).toBeGreaterThan(0);
    expect(new Set(cautions).size).toBe(cautions.length);
    expect(cautions.filter((c) => /apparent sizes/.test(c!))).toHaveLength(1);
  });

  it('prints the HTML report to PDF with the system’s Chromium', async () => {
    expect(existsSync('/usr/bin/chromium'), 'Chromium is missing at /usr/bin/chromium: apt-get install -y chromium').toBe(true);
    const file = await ok<{ fileName: string; bytesBase64: string }>('report.pdf', {});
    expect(file.fileName).toMatch(/\.pdf$/);
    expect(Buffer.from(file.bytesBase64, 'base64').subarray(0, 5).toString('latin1')).toBe('%PDF-');
  }, 120_000);

  it('writes a CSV report with one row per sample after the commented settings', async () => {
    const file = await ok<{ text: string }>('report.build', { format: 'csv' });
    const rows = file.text.trim().split('\n').filter((l) => !l.startsWith('#'));
    expect(rows[0]).toMatch(/^sample,file,sha256/);
    expect(rows.length).toBe(3);
    expect(file.text).toMatch(/# setting target phase: silicon test/);
    expect(file.text).toMatch(/# setting background \(SNIP half-width, ° 2θ\): automatic/);
  });

  it('analyses with the background width of the settings (automatic unless set) and reports it', async () => {
    type Detail = { peaks: Array<{ area: number }> };
    const before = await ok<Detail>('sample.get', { id: sampleId });
    await ok('project.settings', { settings: { backgroundHalfWidthDeg: 0.25 } });
    await ok('sample.reanalyze', { id: sampleId });
    const after = await ok<Detail>('sample.get', { id: sampleId });
    expect(after.peaks.map((p) => p.area)).not.toEqual(before.peaks.map((p) => p.area));
    const csv = await ok<{ text: string }>('report.build', { format: 'csv' });
    expect(csv.text).toMatch(/# setting background \(SNIP half-width, ° 2θ\): 0\.25/);
    await ok('project.settings', { settings: { backgroundHalfWidthDeg: null } });
    expect((await api.call('project.settings', { settings: { backgroundHalfWidthDeg: 0 } })).ok).toBe(false);
  });
});
