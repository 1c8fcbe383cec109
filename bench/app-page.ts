/**
 * The app as a chemist meets it, in headless Chromium on browser mode (Debian's chromium through
 * playwright-core, as the end-to-end tests drive it): a picked file's first pattern drawn, the
 * page's longest frozen stretch while a 2 000 000-line file is added, and how soon Cancel stops the
 * file in progress. Measured in the page: `performance.now()` from the page getting the file to the
 * chart drawn (the screens record it), long tasks by a PerformanceObserver of type 'longtask'
 * (any task of 50 ms or more that held the page's thread), Cancel from the click to the engine's
 * answer that the file was stopped (the progress box goes only then).
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type Page } from 'playwright-core';
import { createAppApi } from '../src/app/api.js';
import { patternToXyText, simulatePattern } from '../src/core/crystal/simulate.js';
import type { Reference } from '../src/core/model/reference.js';
import { anodeWavelength } from '../src/core/model/wavelengths.js';
import { findChromium } from '../src/node/browser.js';
import { startHost } from '../src/host/server.js';
import { timeStats, type BenchRow } from './types.js';

const ROOT = join(import.meta.dirname, '..', '..');

/** A simulated pattern of `points` lines, x to 6 decimals so that 2 000 000 steps over 85° stay distinct. */
function patternFile(dir: string, name: string, points: number, lines: Reference['lines'], seed: number): string {
  const pattern = simulatePattern({ phases: [{ lines, scale: 1, sizeNm: 40 }], wavelength: anodeWavelength('Cu'), twoThetaMinDeg: 5, twoThetaMaxDeg: 90, stepDeg: 85 / (points - 1), peakCounts: 5000, noiseSeed: seed });
  const file = join(dir, name);
  writeFileSync(file, patternToXyText(pattern, ['simulated for the bench'], { xDecimals: 6 }));
  return file;
}

async function pick(page: Page, file: string): Promise<void> {
  const chooser = page.waitForEvent('filechooser');
  await page.getByTestId('open-patterns').click();
  await (await chooser).setFiles(file);
}

// The page-side steps are JavaScript text: the bench compiles without the DOM's types.

/** Start collecting the page's long tasks afresh. */
const watchLongTasks = (page: Page): Promise<void> =>
  page.evaluate(`(() => {
    window.benchObserver?.disconnect();
    window.benchLongTasks = [];
    window.benchObserver = new PerformanceObserver((list) => { for (const entry of list.getEntries()) window.benchLongTasks.push(entry.duration); });
    window.benchObserver.observe({ type: 'longtask' });
  })()`);

const longestTask = (page: Page): Promise<number> => page.evaluate('Math.max(0, ...window.benchLongTasks)');

const pageTimings = (page: Page): Promise<{ lastPreviewMs: number; lastAddMs: number }> => page.evaluate('({ ...window.crystallogTimings })');

/** Click Cancel; resolves with the ms until the progress box goes (the engine has answered that the file stopped). */
const cancelAndWait = (page: Page): Promise<number> =>
  page.evaluate(`new Promise((resolve) => {
    const started = performance.now();
    document.querySelector('[data-testid="progress-cancel"]').click();
    const check = () => (document.querySelector('[data-testid="progress"]') ? requestAnimationFrame(check) : resolve(performance.now() - started));
    check();
  })`);

/** Add one file and wait until it is shown analysed; the page's own drop → first drawn pattern, ms. */
async function addAndWait(page: Page, file: string, timeoutMs: number): Promise<{ previewMs: number; addMs: number }> {
  const before = await page.locator('[data-testid="sample-list"] li').count();
  await pick(page, file);
  await page.locator('[data-testid="sample-list"] li').nth(before).waitFor({ timeout: timeoutMs });
  await page.getByTestId('verdict').waitFor({ timeout: timeoutMs });
  const t = await pageTimings(page);
  return { previewMs: t.lastPreviewMs, addMs: t.lastAddMs };
}

function row(name: string, times: number[], target: string, note?: string): BenchRow {
  return { name, ...timeStats(times), target, ...(note ? { note } : {}) };
}

export async function pageRows(reference: Reference): Promise<BenchRow[]> {
  const chromiumPath = process.env.CRYSTALLOG_TEST_CHROMIUM ?? findChromium();
  if (!chromiumPath) return [];
  const dataDir = mkdtempSync(join(tmpdir(), 'crystallog-bench-page-'));
  const profileDir = mkdtempSync(join(tmpdir(), 'crystallog-bench-chromium-'));
  const api = createAppApi({ mode: 'browser', dataDir });
  const host = await startHost({ api, staticDir: join(ROOT, 'dist', 'renderer') });
  const context = await chromium.launchPersistentContext(profileDir, {
    executablePath: chromiumPath,
    headless: true,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--no-first-run'],
    viewport: { width: 1280, height: 800 },
  });
  try {
    for (const ref of (await api.call('library.list', { search: 'silicon' }).then((r) => (r.ok ? (r.result as Array<{ name: string }>) : [])))) await api.call('library.remove', { name: ref.name });
    await api.call('library.save', { reference });
    await api.call('project.create', { name: 'bench page', target: reference.name });
    const page = context.pages()[0] ?? (await context.newPage());
    await page.goto(host.launchUrl);
    await page.getByTestId('open-patterns').waitFor();

    const small = Array.from({ length: 6 }, (_, i) => patternFile(dataDir, `p10k-${i}.xy`, 10_001, reference.lines, 20 + i));
    const large = Array.from({ length: 3 }, (_, i) => patternFile(dataDir, `p100k-${i}.xy`, 100_001, reference.lines, 40 + i));
    // The first file warms the page and the engine's analysis thread; it is not counted.
    const first10k: number[] = [];
    for (const [i, file] of small.entries()) {
      const { previewMs } = await addAndWait(page, file, 60_000);
      if (i > 0) first10k.push(previewMs);
    }
    const first100k: number[] = [];
    const add100k: number[] = [];
    for (const file of large) {
      const { previewMs, addMs } = await addAndWait(page, file, 120_000);
      first100k.push(previewMs);
      add100k.push(addMs);
    }

    const huge = patternFile(dataDir, 'p2M.xy', 2_000_000, reference.lines, 7);
    await watchLongTasks(page);
    const hugeAdd = await addAndWait(page, huge, 600_000);
    const frozenAdd = await longestTask(page);

    // Cancel: the same size of file again, stopped while it is being analysed.
    const again = patternFile(dataDir, 'p2M-cancelled.xy', 2_000_000, reference.lines, 8);
    const samplesBefore = await page.locator('[data-testid="sample-list"] li').count();
    await watchLongTasks(page);
    await pick(page, again);
    await page.getByTestId('progress-stage').filter({ hasText: 'analysing' }).waitFor({ timeout: 120_000 });
    const cancelMs = await cancelAndWait(page);
    const frozenCancel = await longestTask(page);
    await page.getByText(/Cancelled:/).waitFor();
    const state = await api.call('project.state', {});
    const kept = state.ok ? (state.result as { samples: unknown[] }).samples.length : -1;
    if (kept !== samplesBefore) throw new Error(`the cancelled file was kept (${kept} samples, ${samplesBefore} before)`);

    return [
      row('app page: drop → first pattern drawn, 10 000 points', first10k, '≤ 200 ms', '5 files after a warm-up file; the engine reads the file on its analysis thread and sends a reduced pattern'),
      row('app page: drop → first pattern drawn, 100 000 points', first100k, '≤ 600 ms'),
      row('app page: drop → analysed and shown, 100 000 points', add100k, 'for the record'),
      row('app page: drop → first pattern drawn, 2 000 000 lines', [hugeAdd.previewMs], 'for the record'),
      row('app page: drop → analysed and shown, 2 000 000 lines', [hugeAdd.addMs], 'for the record'),
      row('app page: longest frozen frame adding a 2 000 000-line file', [frozenAdd], '≤ 100 ms', "longest task of the page's thread (PerformanceObserver 'longtask'; 0 when none reached 50 ms)"),
      row('app page: Cancel during the analysis of a 2 000 000-line file', [cancelMs], '≤ 1 000 ms', `click → the engine has stopped it; nothing kept; longest frozen frame meanwhile ${frozenCancel.toFixed(0)} ms`),
    ];
  } finally {
    await context.close();
    await host.close();
    api.close();
    for (const dir of [profileDir, dataDir]) rmSync(dir, { recursive: true, force: true });
  }
}
