/**
 * The HTML report of the demo project carries every figure a chemist expects (each sample's pattern,
 * each size–strain plot, the series size charts, the growth curves), prints on the paper chosen in
 * the app's settings, and states each caution once.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createAppApi } from '../../src/app/api.js';
import type { ApiResults, ExportedFile, SampleDetail } from '../../src/api/contract.js';
import type { ApiReply } from '../../src/api/reply.js';
import { testApi } from './fixtures.js';

const { dataDir, api, ok } = testApi('crystallog-report-');
afterAll(() => api.close());

let html = '';
let details: SampleDetail[] = [];

describe('the HTML report of the demo project', () => {
  beforeAll(async () => {
    const demo = await ok<ApiResults['project.demo']>('project.demo', {});
    for (const index of demo.pending) await ok('project.demoSample', { index });
    const state = await ok<ApiResults['project.state']>('project.state', {});
    details = await Promise.all(state.samples.map((s) => ok<SampleDetail>('sample.get', { id: s.id })));
    html = (await ok<ExportedFile>('report.build', { format: 'html' })).text!;
  }, 180_000);

  it('draws each analysed sample’s pattern with fit, difference and phase marks', () => {
    const figures = [...html.matchAll(/<figure class="pattern"><svg[^>]*aria-label="([^"]*)"/g)].map((m) => m[1]);
    expect(figures).toHaveLength(details.length);
    expect(html).toContain('obs − model');
    expect(html).toContain('peaks of methylammonium lead iodide monohydrate');
  });

  it('draws the size–strain plot of every sample that has one, with its fitted line and axes in units', () => {
    const withPlot = details.filter((d) => d.size?.sizeStrain).map((d) => d.name);
    expect(withPlot.length).toBeGreaterThan(3);
    const plots = [...html.matchAll(/<figure class="size-strain"><svg[^>]*aria-label="Size–strain plot of ([^"]*)"/g)].map((m) => m[1]);
    expect(plots).toEqual(withPlot);
    const first = html.slice(html.indexOf('<figure class="size-strain">'), html.indexOf('</figure>', html.indexOf('<figure class="size-strain">')));
    expect(first).toContain('β*/d*² (Å)');
    expect(first).toContain('(β*/d*)² (no unit)');
    expect(first).toContain('fitted line');
    // Every tick label is a round number: at most one significant digit after the scale factor.
    const ticks = [...first.matchAll(/text-anchor="(?:middle|end)">(-?[\d.]+)<\/text>/g)].map((m) => m[1]!);
    expect(ticks.length).toBeGreaterThan(5);
    for (const t of ticks) expect(t).toMatch(/^-?(0|[1-9]0*|0\.0*[1-9]|[1-9]\d?0*)$/);
  });

  it('draws the series size charts and each other phase’s growth curve', () => {
    expect(html).toContain('By workup variant (error bars');
    expect(html).toContain('By exposure time (error bars');
    expect(html).toContain('<figure class="growth">');
    expect(html).toMatch(/methylammonium lead iodide monohydrate \(points and fitted growth curve\)/);
    expect(html).toMatch(/lead iodide \(points and fitted growth curve\)/);
  });

  it('states each caution once', () => {
    const cautions = [...html.matchAll(/<p class="caution">([^<]*)<\/p>/g)].map((m) => m[1]!);
    // The three every report carries, then what the composition lines assume (the same for every demo sample).
    expect(cautions).toHaveLength(5);
    expect(cautions.filter((c) => /^(Weight fractions|Crystalline share)/.test(c))).toHaveLength(2);
    for (const c of cautions) expect(html.split(c).length - 1).toBe(1);
    // The analysis gives every sample the detection-limit sentence among its reasons; the report says it once.
    const reasons = details.flatMap((d) => d.match?.reasons ?? []);
    expect(reasons.filter((r) => /below the detection limit/.test(r)).length).toBeGreaterThan(1);
    expect(html.match(/amorphous/g)).toHaveLength(1);
  });

  it('prints on A4 unless Letter is chosen in the app settings, and keeps that choice', { timeout: 120_000 }, async () => {
    expect(html).toContain('@page{size:A4;');
    expect((await ok<ApiResults['app.info']>('app.info', {})).preferences).toEqual({ paper: 'A4' });
    expect(await ok('app.preferences', { paper: 'Letter' })).toEqual({ paper: 'Letter' });
    expect((await ok<ExportedFile>('report.build', { format: 'html' })).text).toContain('@page{size:Letter;');
    // The PDF made by the system's Chromium takes the page size from the report: Letter is 612 × 792 pt.
    const pdf = Buffer.from((await ok<ExportedFile>('report.pdf', {})).bytesBase64!, 'base64').toString('latin1');
    const boxes = new Set([...pdf.matchAll(/MediaBox\s*\[\s*0 0 ([\d.]+) ([\d.]+)\s*\]/g)].map((m) => `${Math.round(Number(m[1]))} × ${Math.round(Number(m[2]))}`));
    expect([...boxes]).toEqual(['612 × 792']);
    const again = createAppApi({ mode: 'browser', dataDir });
    try {
      const reply = await again.call('app.info', {});
      expect(reply.ok && (reply.result as ApiResults['app.info']).preferences.paper).toBe('Letter');
    } finally {
      again.close();
    }
    const refused = (await api.call('app.preferences', { paper: 'A3' })) as Extract<ApiReply, { ok: false }>;
    expect(refused.ok).toBe(false);
    expect(refused.error.message).toMatch(/paper/i);
    await ok('app.preferences', { paper: 'A4' });
  });
});
