/**
 * The app's own speed, through its API as the screens call it: a dropped 10 000-point pattern
 * analysed (sample.add) and fetched for drawing (sample.get), a 50 000-point pattern fetched for
 * drawing, and a drop of 100 files one after another as the screens send them. The drawing itself
 * and panning are timed in the browser by the end-to-end test (test/e2e).
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createAppApi } from '../src/app/api.js';
import { patternToXyText, simulatePattern } from '../src/core/crystal/simulate.js';
import type { Reference } from '../src/core/model/reference.js';
import { anodeWavelength } from '../src/core/model/wavelengths.js';
import { pageRows } from './app-page.js';
import { timeStats, type BenchRow } from './types.js';

/** Silicon lines from a = 5.43159 Å (NIST SRM 640d); intensities from memory. */
export const SILICON: Reference = {
  name: 'silicon bench',
  formula: 'Si',
  tags: ['standard'],
  source: 'bench: d from the NIST SRM 640d cell, intensities from memory',
  lines: ([[1, 1, 1, 100], [2, 2, 0, 55], [3, 1, 1, 30], [4, 0, 0, 6], [3, 3, 1, 11], [4, 2, 2, 12]] as const).map(([h, k, l, i]) => ({ d: 5.43159 / Math.hypot(h, k, l), intensity: i, hkl: [h, k, l] as [number, number, number] })),
};

function patternBase64(points: number, seed: number): string {
  const pattern = simulatePattern({
    phases: [{ lines: SILICON.lines, scale: 1, sizeNm: 40 }],
    wavelength: anodeWavelength('Cu'),
    twoThetaMinDeg: 5,
    twoThetaMaxDeg: 90,
    stepDeg: 85 / (points - 1),
    peakCounts: 5000,
    noiseSeed: seed,
  });
  return Buffer.from(patternToXyText(pattern)).toString('base64');
}

function row(name: string, times: number[], target?: string, note?: string): BenchRow {
  return { name, ...timeStats(times), ...(target ? { target } : {}), ...(note ? { note } : {}) };
}

export async function run(): Promise<BenchRow[]> {
  const engineRows = await apiRun();
  // The page's own figures, in headless Chromium (none when no Chromium is installed: the note says so).
  const page = await pageRows(SILICON);
  if (page.length === 0) process.stderr.write('bench/app: no Chromium found (set CRYSTALLOG_TEST_CHROMIUM); the page figures are left out\n');
  return [...engineRows, ...page];
}

async function apiRun(): Promise<BenchRow[]> {
  const dataDir = mkdtempSync(join(tmpdir(), 'crystallog-bench-app-'));
  const api = createAppApi({ mode: 'browser', dataDir });
  const call = async (method: string, params: unknown): Promise<unknown> => {
    const reply = await api.call(method, params);
    if (!reply.ok) throw new Error(`${method}: ${reply.error.message}`);
    return reply.result;
  };
  try {
    // The seed library ships a silicon too: keep only the bench's own, so no two references claim the same peaks.
    for (const ref of (await call('library.list', { search: 'silicon' })) as Array<{ name: string }>) await call('library.remove', { name: ref.name });
    await call('library.save', { reference: SILICON });
    await call('project.create', { name: 'bench' });
    await call('project.settings', { settings: { target: SILICON.name } });
    const add: number[] = [];
    const get: number[] = [];
    for (let i = 0; i < 5; i++) {
      const bytesBase64 = patternBase64(10_001, 11 + i);
      let t = performance.now();
      const { id } = (await call('sample.add', { fileName: `p${i}.xy`, bytesBase64 })) as { id: number };
      add.push(performance.now() - t);
      t = performance.now();
      await call('sample.get', { id });
      get.push(performance.now() - t);
    }
    const big: number[] = [];
    for (let i = 0; i < 3; i++) {
      const { id } = (await call('sample.add', { fileName: `big${i}.xy`, bytesBase64: patternBase64(50_001, 3 + i) })) as { id: number };
      const t = performance.now();
      await call('sample.get', { id });
      big.push(performance.now() - t);
    }
    const files = Array.from({ length: 100 }, (_, i) => patternBase64(10_001, 100 + i));
    const t = performance.now();
    for (let i = 0; i < files.length; i++) await call('sample.add', { fileName: `drop-${i}.xy`, bytesBase64: files[i] });
    const drop = performance.now() - t;
    const apiRows = [
      row('app: 10 000-point pattern dropped, analysed (sample.add)', add, 'with drawing < 500 ms'),
      row('app: 10 000-point pattern fetched for drawing (sample.get)', get, 'with analysis < 500 ms', 'includes the second peak search for the background and fit curves'),
      row('app: 50 000-point pattern fetched for drawing (sample.get)', big),
      row('app: 100-file drop, 10 000 points each, one request per file', [drop], '< 15 000 ms', 'one process, files in sequence as the screens send them'),
    ];
    return apiRows;
  } finally {
    api.close();
    rmSync(dataDir, { recursive: true, force: true });
  }
}
