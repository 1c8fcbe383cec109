import { existsSync } from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import { createAppApi } from '../../src/app/api.js';
import type { AddedSample, ApiResults, ProjectState, SampleSummary } from '../../src/api/contract.js';
import type { ApiReply } from '../../src/api/reply.js';
import { b64, freshDataDir, SILICON, siliconPatternText, testApi } from './fixtures.js';

const { dataDir, api, ok } = testApi();
afterAll(() => api.close());

describe('managing projects and samples', () => {
  it('asks for the target when a project is made, and refuses one the library lacks', async () => {
    await ok('library.save', { reference: SILICON });
    const state = await ok<ProjectState>('project.create', { name: 'Wafer offcuts', target: SILICON.name });
    expect(state.settings.target).toBe(SILICON.name);
    const refused = (await api.call('project.create', { name: 'Other', target: 'unobtainium' })) as Extract<ApiReply, { ok: false }>;
    expect(refused.error.message).toBe('The target "unobtainium" is not in the library; add it there first or pick another.');
  });

  it('warns when the same file is added twice, naming the sample that holds it', async () => {
    const text = siliconPatternText();
    const first = await ok<AddedSample>('sample.add', { fileName: 'offcut_a.xy', bytesBase64: b64(text) });
    expect(first.duplicateOf).toEqual([]);
    const again = await ok<AddedSample>('sample.add', { fileName: 'offcut_a_copy.xy', bytesBase64: b64(text) });
    expect(again.duplicateOf).toEqual([{ id: first.id, name: 'offcut_a.xy' }]);
    const other = await ok<AddedSample>('sample.add', { fileName: 'offcut_b.xy', bytesBase64: b64(siliconPatternText({ seed: 9 })) });
    expect(other.duplicateOf).toEqual([]);
  });

  it('renames a sample, and gives back the file name when the name is cleared', async () => {
    const state = await ok<ProjectState>('project.state', {});
    const sample = state.samples[0]!;
    const renamed = await ok<SampleSummary>('sample.label', { id: sample.id, variant: 'washed', hours: null, name: 'Offcut A, washed' });
    expect(renamed.name).toBe('Offcut A, washed');
    expect(renamed.variant).toBe('washed');
    const kept = await ok<SampleSummary>('sample.label', { id: sample.id, variant: 'washed', hours: 2 });
    expect(kept.name).toBe('Offcut A, washed');
    const cleared = await ok<SampleSummary>('sample.label', { id: sample.id, variant: 'washed', hours: 2, name: null });
    expect(cleared.name).toBe('offcut_a.xy');
  });

  it('removes a sample, so the same file added again is a duplicate of the one left only', async () => {
    const before = await ok<ProjectState>('project.state', {});
    const copy = before.samples.find((s) => s.fileName === 'offcut_a_copy.xy')!;
    const after = await ok<ProjectState>('sample.remove', { id: copy.id });
    expect(after.samples.map((s) => s.id)).toEqual(before.samples.filter((s) => s.id !== copy.id).map((s) => s.id));
    const gone = (await api.call('sample.get', { id: copy.id })) as Extract<ApiReply, { ok: false }>;
    expect(gone.ok).toBe(false);
    expect(gone.error.kind).toBe('input');
    const again = await ok<AddedSample>('sample.add', { fileName: 'offcut_a_again.xy', bytesBase64: b64(siliconPatternText()) });
    expect(again.duplicateOf.map((d) => d.name)).toEqual(['offcut_a.xy']);
  });

  it('renames and deletes a project, keeping its file in the deleted folder', async () => {
    const { project } = await ok<ProjectState>('project.rename', { name: 'Wafer offcuts, March' });
    expect(project.name).toBe('Wafer offcuts, March');
    expect((await ok<Array<{ id: string; name: string }>>('project.list', {})).find((p) => p.id === project.id)?.name).toBe('Wafer offcuts, March');
    const deleted = await ok<ApiResults['project.delete']>('project.delete', { id: project.id });
    expect(deleted.projects.some((p) => p.id === project.id)).toBe(false);
    expect(existsSync(deleted.keptAt)).toBe(true);
    expect(deleted.keptAt.startsWith(`${dataDir}/projects/deleted/`)).toBe(true);
    const none = (await api.call('project.state', {})) as Extract<ApiReply, { ok: false }>;
    expect(none.error.message).toMatch(/^No project is open/);
    const gone = (await api.call('project.open', { id: project.id })) as Extract<ApiReply, { ok: false }>;
    expect(gone.error.message).toMatch(/^There is no project/);
  });
});

describe('the demo button', () => {
  it('opens the demo project made before, with only the samples it still lacks', async () => {
    const first = await ok<ApiResults['project.demo']>('project.demo', {});
    expect(first.reopened).toBe(false);
    expect(first.pending).toEqual(Array.from({ length: first.steps }, (_, i) => i));
    await ok('project.demoSample', { index: 0 });
    await ok('project.create', { name: 'Something else' });
    const second = await ok<ApiResults['project.demo']>('project.demo', {});
    expect(second.reopened).toBe(true);
    expect(second.state.project.id).toBe(first.state.project.id);
    expect(second.pending).toEqual(first.pending.slice(1));
    const demos = (await ok<Array<{ demo: boolean }>>('project.list', {})).filter((p) => p.demo);
    expect(demos).toHaveLength(1);
  }, 120_000);
});

describe('the demo project on first open', () => {
  it('shows no sample out of date, the standard included', async () => {
    const fresh = createAppApi({ mode: 'browser', dataDir: freshDataDir() });
    try {
      const reply = await fresh.call('project.demo', {});
      if (!reply.ok) throw new Error(reply.error.message);
      const { state } = reply.result as ApiResults['project.demo'];
      const standard = state.samples.find((s) => /LaB6/.test(s.fileName))!;
      expect(standard.verdict).toBe('instrument standard');
      expect(state.samples.filter((s) => s.stale).map((s) => s.name)).toEqual([]);
    } finally {
      fresh.close();
    }
  }, 120_000);
});
