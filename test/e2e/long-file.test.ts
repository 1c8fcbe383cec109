/**
 * A very large pattern file in a real browser: its pattern is drawn as soon as the engine has read it
 * (before the verdict), the progress box names the stage of the file in progress, Cancel during the
 * analysis stops that file and keeps nothing of it, and the app goes on working. Timings are in the
 * bench (bench/app.ts), not here.
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { siliconPatternText } from '../app/fixtures.js';
import { openApp, pickFile, pageProblems, startEmptyProject, SCREENSHOTS, type AppSession } from './harness.js';

let app: AppSession;
const shot = (name: string) => app.page.screenshot({ path: join(SCREENSHOTS, `${name}.png`) });

/** The project's samples as the engine has them (not as the page shows them). */
const storedSamples = (): Promise<Array<{ fileName: string }>> =>
  app.page.evaluate(async () => {
    const response = await fetch('/api/project.state', { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: '{}' });
    return ((await response.json()) as { result: { samples: Array<{ fileName: string }> } }).result.samples;
  });

describe('a very large pattern file (headless Chromium)', () => {
  beforeAll(async () => {
    app = await openApp();
    const { page } = app;
    await startEmptyProject(page, 'long file', 'methylammonium lead iodide');
  }, 120_000);
  afterAll(async () => {
    await app?.close();
  });

  it('draws a 2 000 000-line file before its verdict, and Cancel during the analysis adds nothing', async () => {
    const { page } = app;
    const file = join(app.dataDir, 'silicon-2M-lines.xy');
    writeFileSync(file, siliconPatternText({ points: 2_000_000, seed: 9, xDecimals: 6 }));
    await pickFile(app.page, file);

    // The pattern is drawn from the engine's reduced copy while the analysis runs: no verdict yet.
    await page.getByTestId('pattern-preview').waitFor({ timeout: 120_000 });
    const preview = page.locator('canvas[data-testid="pattern-chart"][data-preview]');
    await preview.waitFor();
    expect(Number(await preview.evaluate((el) => (el as HTMLCanvasElement).dataset.drawnPoints))).toBeGreaterThan(100);
    expect(await page.getByTestId('verdict').count()).toBe(0);
    expect(await page.getByTestId('pattern-preview').textContent()).toMatch(/2,000,000 points read; analysing/);

    // The progress box names the stage of the file in progress, with a bar that moves by itself.
    const stage = page.getByTestId('progress-stage');
    await expect.poll(() => stage.textContent(), { timeout: 30_000 }).toMatch(/silicon-2M-lines\.xy: analysing 2,000,000 points…/);
    expect(await page.locator('[data-testid="progress"] progress.progress-item').evaluate((el) => (el as HTMLProgressElement).position)).toBe(-1);
    await shot('long-01-drawn-while-analysing');
    await page.setViewportSize({ width: 1280, height: 720 });
    await shot('long-01b-drawn-while-analysing-720');
    await page.setViewportSize({ width: 1280, height: 800 });

    await page.getByTestId('progress-cancel').click();
    await page.getByTestId('progress').waitFor({ state: 'detached', timeout: 30_000 });
    await page.getByText(/Cancelled: the file in progress and those after it were not added/).waitFor();
    expect(await storedSamples()).toEqual([]);
    expect(await page.locator('[data-testid="sample-list"] li').count()).toBe(0);
    expect(await page.getByTestId('pattern-preview').count()).toBe(0);
    await shot('long-02-cancelled');

    // The app still works: the next file is read, analysed and added as usual.
    const small = join(app.dataDir, 'silicon-after.xy');
    writeFileSync(small, siliconPatternText({ points: 10_001, seed: 4 }));
    await pickFile(app.page, small);
    await page.getByTestId('verdict').waitFor({ timeout: 60_000 });
    expect((await storedSamples()).map((s) => s.fileName)).toEqual(['silicon-after.xy']);
    expect(await page.locator('[data-testid="sample-list"] li').count()).toBe(1);
    expect(await page.locator('canvas[data-testid="pattern-chart"][data-preview]').count()).toBe(0);
    // The cancelled file's own request answers 400 with its sentence (the browser logs that); nothing else went wrong.
    expect(pageProblems(page).filter((p) => !/status of 400/.test(p))).toEqual([]);
  }, 300_000);

  it('refuses an unreadable file by name and line before anything is kept, with the drawn sample left in place', async () => {
    const { page } = app;
    const broken = join(app.dataDir, 'broken.xy');
    writeFileSync(broken, '10.0 100\n10.1 120\n10.2 abc\n');
    await pickFile(app.page, broken);
    await page.getByText(/broken\.xy.*line 3/).waitFor({ timeout: 30_000 });
    expect((await storedSamples()).map((s) => s.fileName)).toEqual(['silicon-after.xy']);
    await page.getByTestId('verdict').waitFor();
  }, 60_000);

  it('draws a 300 000-point pattern from its coarse copy, and every point again when zoomed in far', async () => {
    const { page } = app;
    const file = join(app.dataDir, 'silicon-300k.xy');
    writeFileSync(file, siliconPatternText({ points: 300_001, seed: 6, xDecimals: 6 }));
    await pickFile(app.page, file);
    await page.locator('[data-testid="sample-list"] li', { hasText: 'silicon-300k' }).waitFor({ timeout: 120_000 });
    await page.getByTestId('verdict').waitFor();
    const chart = page.locator('canvas[data-testid="pattern-chart"]:not([data-preview])');
    const drawn = () => chart.evaluate((el) => Number((el as HTMLCanvasElement).dataset.drawnPoints));
    const width = await chart.evaluate((el) => el.getBoundingClientRect().width);
    const whole = await drawn();
    // Measured, background, fit and difference: at most four points per pixel column each.
    expect(whole).toBeGreaterThan(0);
    expect(whole).toBeLessThanOrEqual(4 * 4 * (width + 2));
    await page.locator('.chart-box').focus();
    for (let i = 0; i < 30; i++) await page.keyboard.press('+');
    const [low, high] = (await chart.evaluate((el) => (el as HTMLCanvasElement).dataset.viewRange!)).split(' ').map(Number) as [number, number];
    // 5–90° in 300 000 steps: every point in view, and one beyond each edge, for each of the four curves.
    const step = 85 / 300_000;
    const inView = Math.floor((high - 5) / step) - Math.ceil((low - 5) / step) + 1;
    expect(Math.abs((await drawn()) - 4 * (inView + 2))).toBeLessThanOrEqual(8);
    await page.keyboard.press('r');
    expect(await drawn()).toBe(whole);
    await shot('long-03-300k-whole');
  }, 180_000);
});
