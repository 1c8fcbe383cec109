import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ProjectState, SampleDetail, SampleSummary } from '../../src/api/contract.js';
import { analyzePatternWithCurves, createAnalysisContext } from '../../src/core/analysis/analyse.js';
import { readPatternBytes } from '../../src/core/pattern/read.js';
import { openDatabase, schemaVersion } from '../../src/node/library/sqlite.js';
import { PROJECT_MIGRATIONS, ProjectStore } from '../../src/node/project-store.js';
import { b64, freshDataDir, SILICON, siliconPatternText, testApi } from './fixtures.js';

const { dataDir, api, ok } = testApi();
const decode = (base64: string): Float32Array => {
  const bytes = Buffer.from(base64, 'base64');
  return new Float32Array(bytes.buffer, bytes.byteOffset, bytes.byteLength / 4);
};

afterAll(() => api.close());

describe('opening a sample shows what was saved with its result', () => {
  const text = siliconPatternText({ extraLowAngleD: 9.2 });
  let sample: SampleSummary;
  let opened: SampleDetail;

  beforeAll(async () => {
    for (const ref of await ok<Array<{ name: string }>>('library.list', { search: 'silicon' })) await ok('library.remove', { name: ref.name });
    await ok('library.save', { reference: SILICON });
    await ok('project.create', { name: 'Saved results' });
    await ok('project.settings', { settings: { target: SILICON.name } });
    sample = await ok<SampleSummary>('sample.add', { fileName: 'si_as_made.xy', bytesBase64: b64(text) });
    opened = await ok<SampleDetail>('sample.get', { id: sample.id });
  });

  it('draws the background and model the analysis computed, point for point', () => {
    const workspace = api.workspace;
    const pattern = readPatternBytes(Buffer.from(text), 'si_as_made.xy');
    const context = createAnalysisContext(workspace.references.all(), null, { target: SILICON.name, wavelength: workspace.wavelength() });
    const { curves } = analyzePatternWithCurves(pattern, context);
    expect(opened.background).not.toBeNull();
    const background = decode(opened.background!);
    const model = decode(opened.model!);
    expect(background.length).toBe(pattern.x.length);
    // Stored as float32: equal to the float32 rounding of the analysis's own curves.
    expect(Array.from(background)).toEqual(Array.from(Float32Array.from(curves.background)));
    expect(Array.from(model)).toEqual(Array.from(Float32Array.from(curves.model)));
    expect(opened.stale).toBe(false);
    expect(opened.staleReason).toBeNull();
  });

  it('joins each peak to the match by its index', () => {
    const match = opened.match!;
    const silicon = match.phases.find((p) => p.name === SILICON.name)!;
    for (const line of silicon.lines) expect(opened.peaks[line.peakIndex]!.phase).toBe(SILICON.name);
    const unexplained = new Set(match.unexplained.map((u) => u.peakIndex));
    expect(unexplained.size).toBeGreaterThan(0); // the extra line at d 9.2 Å
    for (const peak of opened.peaks) expect(peak.unexplained).toBe(unexplained.has(peak.index));
    const low = opened.peaks.filter((p) => p.lowAngle);
    expect(low.map((p) => p.index)).toEqual(opened.lowAnglePeaks.map((p) => p.peakIndex));
    expect(low[0]!.d).toBeCloseTo(9.2, 1);
  });

  it('marks results stale when a setting changes, and keeps showing what was saved until analysed again', async () => {
    const state = await ok<ProjectState>('project.settings', { settings: { backgroundHalfWidthDeg: 6, toleranceDeg: 0.05 } });
    const listed = state.samples.find((s) => s.id === sample.id)!;
    expect(listed.stale).toBe(true);
    expect(listed.staleReason).toBe('the matching tolerance and background clipping half-width changed since this analysis; analyse again to refresh');
    const again = await ok<SampleDetail>('sample.get', { id: sample.id });
    expect(again.stale).toBe(true);
    // The saved curves, not a new search with the new background width.
    expect(again.background).toBe(opened.background);
    expect(again.peaks).toEqual(opened.peaks);

    const refreshed = await ok<SampleSummary>('sample.reanalyze', { id: sample.id });
    expect(refreshed.stale).toBe(false);
    const after = await ok<SampleDetail>('sample.get', { id: sample.id });
    expect(after.background).not.toBe(opened.background);
  });

  it('marks results stale when the library changes', async () => {
    await ok('library.save', { reference: { ...SILICON, name: 'silicon twin', lines: SILICON.lines.slice(0, 3) } });
    const state = await ok<ProjectState>('project.state', {});
    expect(state.samples.find((s) => s.id === sample.id)!.staleReason).toBe('the reference library changed since this analysis; analyse again to refresh');
    await ok('library.remove', { name: 'silicon twin' });
  });

  it('says when a result was saved without curves or settings, and draws none rather than searching again', async () => {
    const project = (await ok<ProjectState>('project.state', {})).project;
    // A result as an earlier version saved it: no curves, no record of the settings used.
    const store = ProjectStore.open(`${dataDir}/projects/${project.id}.sqlite`);
    const latest = store.latestResult<{ summary: SampleSummary; result: unknown }>(sample.id)!;
    store.saveResult(sample.id, { summary: latest.result.summary, result: latest.result.result });
    store.close();
    const old = await ok<SampleDetail>('sample.get', { id: sample.id });
    expect(old.background).toBeNull();
    expect(old.model).toBeNull();
    expect(old.peaks.length).toBeGreaterThan(0);
    expect(old.stale).toBe(true);
    expect(old.staleReason).toMatch(/earlier version of Crystallog/);
  });
});

describe('project files from before curves were kept', () => {
  it('are brought up to date on open, keeping their samples and results', () => {
    const file = `${freshDataDir('crystallog-migrate-')}/old.sqlite`;
    const v1 = openDatabase(file, { kind: 'project', migrations: PROJECT_MIGRATIONS, upToVersion: 1 });
    v1.prepare(`INSERT INTO sample (file_name, sha256, byte_length, bytes, added_at) VALUES ('a.xy', ?, 3, ?, '2026-01-01')`).run('0'.repeat(64), Buffer.from('abc'));
    v1.prepare(`INSERT INTO result (sample_id, json, references_used, saved_at) VALUES (1, '{"summary":"kept"}', '[]', '2026-01-01')`).run();
    expect(schemaVersion(v1)).toBe(1);
    v1.close();
    const now = ProjectStore.open(file);
    expect(now.schemaVersion).toBe(3);
    expect(now.latestResult(1)!.result).toEqual({ summary: 'kept' });
    expect(now.latestCurves(1)).toBeNull();
    // Step 3 gives samples a temperature: none for the old ones, settable now, checked at the door.
    expect(now.getSample(1)!.temperatureC).toBeNull();
    expect(now.updateSample(1, { temperatureC: 150 }).temperatureC).toBe(150);
    expect(() => now.updateSample(1, { temperatureC: -300 })).toThrow(/absolute zero/);
    expect(now.getSample(1)!.temperatureC).toBe(150);
    now.close();
  });
});
