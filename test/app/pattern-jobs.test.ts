/**
 * Files in progress through the app's API: read on the analysis thread with a reduced pattern to
 * draw at once, kept with their result only when the analysis is complete, stopped by Cancel with
 * nothing kept, refused by name and line when unreadable.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { AddedSample, PatternPreview, ProjectState, SampleDetail } from '../../src/api/contract.js';
import { SILICON, siliconPatternText, testApi } from './fixtures.js';

const { api, ok } = testApi('crystallog-jobs-');
const bytesOf = (text: string): Uint8Array => new Uint8Array(Buffer.from(text, 'utf8'));

beforeAll(async () => {
  await ok('library.save', { reference: SILICON });
  await ok('project.create', { name: 'jobs', target: SILICON.name });
});
afterAll(() => api.close());

describe('files in progress (sample.stage, sample.commit, sample.cancel)', () => {
  it('answers with a reduced pattern once read, then keeps the sample with its analysis', async () => {
    const preview = await ok<PatternPreview>('sample.stage', { jobId: 'one', fileName: 'silicon-300k.xy', bytes: bytesOf(siliconPatternText({ points: 300_001, seed: 2, xDecimals: 6 })) });
    expect(preview.points).toBe(300_001);
    const x = new Float32Array(Buffer.from(preview.x, 'base64').buffer.slice(0));
    // At most the first, lowest, highest and last point of each of the preview's columns; x in order.
    expect(x.length).toBeGreaterThan(4096);
    expect(x.length).toBeLessThanOrEqual(4 * 4098);
    expect(x.every((v, i) => i === 0 || v > x[i - 1]!)).toBe(true);
    expect((await ok<ProjectState>('project.state', {})).samples).toEqual([]);
    const added = await ok<AddedSample>('sample.commit', { jobId: 'one' });
    expect(added.verdict).toBe('target');
    expect((await ok<ProjectState>('project.state', {})).samples.map((s) => s.fileName)).toEqual(['silicon-300k.xy']);
  }, 120_000);

  it('stops a file whose analysis is running: nothing is kept and the next file is analysed', async () => {
    await ok('sample.stage', { jobId: 'two', fileName: 'long.xy', bytes: bytesOf(siliconPatternText({ points: 600_001, seed: 3, xDecimals: 6 })) });
    expect(await ok('sample.progress', { jobId: 'two' })).toEqual({ stage: 'analysing' });
    const commit = api.call('sample.commit', { jobId: 'two' });
    expect(await ok('sample.cancel', { jobId: 'two' })).toEqual({ cancelled: true });
    expect(await ok('sample.progress', { jobId: 'two' })).toEqual({ stage: null });
    const reply = await commit;
    expect(reply.ok).toBe(false);
    expect(!reply.ok && reply.error.message).toBe('long.xy was cancelled; it was not added.');
    expect((await ok<ProjectState>('project.state', {})).samples.map((s) => s.fileName)).toEqual(['silicon-300k.xy']);
    // Too late to cancel a finished file, and a Cancel that came first refuses the file when it arrives.
    expect(await ok('sample.cancel', { jobId: 'one' })).toEqual({ cancelled: false });
    await ok('sample.cancel', { jobId: 'early' });
    const early = await api.call('sample.stage', { jobId: 'early', fileName: 'early.xy', bytesBase64: Buffer.from(siliconPatternText()).toString('base64') });
    expect(!early.ok && early.error.message).toBe('early.xy was cancelled.');
    await ok('sample.stage', { jobId: 'three', fileName: 'after.xy', bytesBase64: Buffer.from(siliconPatternText({ seed: 8 })).toString('base64') });
    expect((await ok<AddedSample>('sample.commit', { jobId: 'three' })).verdict).toBe('target');
  }, 120_000);

  it('refuses an unreadable file by name and line, keeping nothing', async () => {
    const reply = await api.call('sample.stage', { jobId: 'bad', fileName: 'broken.xy', bytes: bytesOf('10.0 100\n10.1 120\n10.2 abc\n') });
    expect(reply.ok).toBe(false);
    expect(!reply.ok && reply.error.message).toMatch(/^broken\.xy, line 3: /);
    expect((await ok<ProjectState>('project.state', {})).samples).toHaveLength(2);
    const twice = await api.call('sample.stage', { jobId: 'x', fileName: 'x.xy', bytes: bytesOf('1 2\n'), bytesBase64: 'AA==' });
    expect(!twice.ok && twice.error.message).toBe('Send the file bytes once, as bytes or as base64.');
  });
});

describe('the first view of a sample added from a file in progress', () => {
  it('shows the pattern its thread read, the same as reading the kept file again', async () => {
    const text = siliconPatternText({ points: 20_001, seed: 12, xDecimals: 6 });
    await ok('sample.stage', { jobId: 'view', fileName: 'view.xy', bytes: bytesOf(text) });
    const added = await ok<AddedSample>('sample.commit', { jobId: 'view' });
    const first = await ok<SampleDetail>('sample.get', { id: added.id });
    // Re-reading from the project file: open the project again, which forgets what the thread read.
    const { project } = await ok<ProjectState>('project.state', {});
    await ok('project.open', { id: project.id });
    const again = await ok<SampleDetail>('sample.get', { id: added.id });
    expect(first.points).toBe(20_001);
    expect([first.x, first.y, first.background, first.model, first.sha256]).toEqual([again.x, again.y, again.background, again.model, again.sha256]);
  }, 60_000);
});
