/**
 * The pattern plot in a real browser: decimated drawing of a long pattern with full resolution when
 * zoomed in, the cursor readout, a chart that follows the window, and hkl labels on matched peaks.
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { siliconPatternText } from '../app/fixtures.js';
import { chromiumAvailable, openApp, pageProblems, ROOT, SCREENSHOTS, type AppSession } from './harness.js';

let app: AppSession;
const shot = (name: string) => app.page.screenshot({ path: join(SCREENSHOTS, `${name}.png`) });

async function pickFile(file: string): Promise<void> {
  const chooser = app.page.waitForEvent('filechooser');
  await app.page.getByTestId('open-patterns').click();
  await (await chooser).setFiles(file);
}

const drawnPoints = () => app.page.getByTestId('pattern-chart').evaluate((el) => Number((el as HTMLCanvasElement).dataset.drawnPoints));
const canvasWidth = () => app.page.getByTestId('pattern-chart').evaluate((el) => el.getBoundingClientRect().width);

describe('the pattern plot (headless Chromium)', () => {
  beforeAll(async () => {
    if (!chromiumAvailable()) throw new Error('Chromium is missing at /usr/bin/chromium: apt-get install -y chromium (or set CRYSTALLOG_TEST_CHROMIUM)');
    app = await openApp();
    const { page } = app;
    await page.setViewportSize({ width: 1440, height: 900 });
    await page.getByRole('button', { name: 'Start an empty project' }).click();
    await page.getByTestId('new-project-name').fill('plot checks');
    await page.getByTestId('new-project-target').selectOption('methylammonium lead iodide');
    await page.getByRole('button', { name: 'Create' }).click();
    await page.getByTestId('open-patterns').waitFor();
  }, 120_000);
  afterAll(async () => {
    await app?.close();
  });

  it('draws a 100 000-point pattern decimated, and every point again when zoomed in', async () => {
    const { page } = app;
    const file = join(app.dataDir, 'silicon-long_100k.xy');
    writeFileSync(file, siliconPatternText({ points: 100_001, seed: 3 }));
    await pickFile(file);
    await page.locator('[data-testid="sample-list"] li', { hasText: 'silicon-long_100k' }).waitFor({ timeout: 120_000 });
    await page.getByTestId('verdict').waitFor();
    const width = await canvasWidth();
    const whole = await drawnPoints();
    console.log(`100 001-point pattern: ${whole} points drawn over a ${width.toFixed(0)} px wide canvas`);
    // Measured, background, fit and difference: at most four points per pixel column each.
    expect(whole).toBeGreaterThan(0);
    expect(whole).toBeLessThanOrEqual(4 * 4 * (width + 2));
    await page.locator('.chart-box').focus();
    for (let i = 0; i < 22; i++) await page.keyboard.press('+');
    const zoomed = await drawnPoints();
    const [low, high] = (await page.getByTestId('pattern-chart').evaluate((el) => (el as HTMLCanvasElement).dataset.viewRange!)).split(' ').map(Number) as [number, number];
    // 5–90° in 100 000 steps of 0.00085°: every point in view, and one beyond each edge, for each of the four curves.
    const step = 85 / 100_000;
    const inView = Math.floor(high / step) - Math.ceil(low / step) + 1;
    console.log(`zoomed to ${low.toFixed(3)}–${high.toFixed(3)}° 2θ: ${zoomed} points drawn, ${inView} measured points in view`);
    expect(Math.abs(zoomed - 4 * (inView + 2))).toBeLessThanOrEqual(8);
    await shot('plot-01-zoomed-100k');
    await page.keyboard.press('r');
    expect(await drawnPoints()).toBe(whole);
  }, 180_000);

  it('raised no script errors in the page', () => {
    expect(pageProblems(app.page).filter((p) => !p.startsWith('Failed to load resource'))).toEqual([]);
  });
});
