/**
 * The pattern plot in a real browser: decimated drawing of a long pattern with full resolution when
 * zoomed in, the cursor readout, a chart that follows the window, and hkl labels on matched peaks.
 */
import { readFileSync, writeFileSync } from 'node:fs';
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

  it('reads 2θ, d, Q and the counts under the cursor, in a band of its own above the plot', async () => {
    const { page } = app;
    const readout = page.getByTestId('chart-readout');
    expect(await readout.textContent()).toMatch(/^Point at the plot/);
    const canvas = await page.getByTestId('pattern-chart').boundingBox();
    // Halfway across the canvas and a third of the way down: inside the plot, away from any label.
    await page.mouse.move(canvas!.x + canvas!.width / 2, canvas!.y + canvas!.height / 3);
    const text = (await readout.textContent()) ?? '';
    await shot('plot-02-readout');
    const match = /^2θ (\d+\.\d{3})°\s+·\s+d (\d+\.\d{4}) Å\s+·\s+Q (\d+\.\d{4}) Å⁻¹\s+·\s+counts (-?\d+) \(point at (\d+\.\d{3})°\)$/.exec(text);
    expect(match, text).not.toBeNull();
    const [twoTheta, d, q, , nearest] = match!.slice(1).map(Number) as [number, number, number, number, number];
    // The pattern runs 5–90° 2θ under Cu Kα1 (1.540593 Å; the simulator's wavelength): Bragg's law and Q = 2π/d.
    expect(twoTheta).toBeGreaterThan(30);
    expect(twoTheta).toBeLessThan(65);
    expect(d).toBeCloseTo(1.540593 / (2 * Math.sin((twoTheta * Math.PI) / 360)), 3);
    expect(q).toBeCloseTo((2 * Math.PI) / d, 3);
    expect(Math.abs(nearest - twoTheta)).toBeLessThan(0.001);
    // The readout box sits above the plot area: its bottom is above the top of the y axis's highest tick.
    const box = await readout.boundingBox();
    expect(box!.y + box!.height).toBeLessThan(canvas!.y + 24);
    await page.mouse.move(canvas!.x + canvas!.width / 2, canvas!.y + canvas!.height + 40);
    expect(await readout.textContent()).toMatch(/^Point at the plot/);
  });

  it('follows the window from 1440×900 to 1280×720, and the pane can be dragged taller', async () => {
    const { page } = app;
    const measure = async (width: number, height: number) => {
      await page.setViewportSize({ width, height });
      await page.waitForTimeout(250);
      const columns = await page.getByTestId('pattern-chart').evaluate((el) => Number((el as HTMLCanvasElement).dataset.columns));
      return { width: await canvasWidth(), height: (await page.locator('.chart-box').boundingBox())!.height, columns };
    };
    const large = await measure(1440, 900);
    const small = await measure(1280, 720);
    await shot('plot-03-1280x720');
    console.log(`canvas ${large.width.toFixed(0)} × ${large.height.toFixed(0)} px at 1440×900, ${small.width.toFixed(0)} × ${small.height.toFixed(0)} px at 1280×720`);
    // The sample list keeps its 290 px, so the canvas loses the 160 px the window lost.
    expect(large.width - small.width).toBeCloseTo(160, -1);
    expect(small.height).toBeLessThan(large.height);
    // The points were chosen again for the narrower plot: one bucket per pixel column of it.
    expect(small.columns).toBeLessThan(large.columns);
    expect(large.columns - small.columns).toBeCloseTo(160, -1);
    // Drag the pane's lower right corner 120 px down; the chart fills the taller pane.
    const box = (await page.locator('.chart-box').boundingBox())!;
    await page.mouse.move(box.x + box.width - 3, box.y + box.height - 3);
    await page.mouse.down();
    await page.mouse.move(box.x + box.width - 3, box.y + box.height + 117, { steps: 5 });
    await page.mouse.up();
    await page.waitForTimeout(250);
    const dragged = (await page.getByTestId('pattern-chart').boundingBox())!;
    expect(dragged.height).toBeGreaterThan(box.height + 100);
    await page.setViewportSize({ width: 1440, height: 900 });
  });

  it('labels matched peaks with their hkl on request, without overlaps, over reference sticks scaled to the pattern', async () => {
    const { page } = app;
    await pickFile(join(ROOT, 'examples', 'simulated_MAPbI3_humid-air_24h.xy'));
    await page.locator('[data-testid="sample-list"] li', { hasText: 'humid-air_24h' }).waitFor({ timeout: 120_000 });
    await page.getByTestId('verdict').waitFor();
    const labels = () => page.getByTestId('pattern-chart').evaluate((el) => ({ shown: Number((el as HTMLCanvasElement).dataset.labelsShown), hidden: Number((el as HTMLCanvasElement).dataset.labelsHidden) }));
    const without = await labels();
    // Without hkl labels only the low-angle alarm is written out: one label for each of the three.
    expect(without).toEqual({ shown: 3, hidden: 0 });
    await page.getByTestId('hkl-labels').check();
    await page.getByTestId('pattern-chart').waitFor();
    const withHkl = await labels();
    await shot('plot-04-hkl-labels');
    console.log(`hkl labels: ${withHkl.shown} drawn, ${withHkl.hidden} left out for want of room (${without.shown} low-angle labels without them)`);
    expect(withHkl.shown).toBeGreaterThan(without.shown + 5);
    // The SVG export carries the same labels and sticks.
    const download = page.waitForEvent('download');
    await page.getByRole('button', { name: 'SVG', exact: true }).click();
    const svg = readFileSync(await (await download).path(), 'utf8');
    writeFileSync(join(SCREENSHOTS, 'plot-hkl-labels.svg'), svg);
    expect(svg.match(/>low-angle extra[^<]*<\/text>/g)?.length).toBe(3);
    expect(svg.match(/<text [^>]*>\d{3}<\/text>/g)?.length).toBeGreaterThan(5);
    expect(svg.match(/stroke-opacity="0\.55"/g)?.length).toBeGreaterThan(20);
    // Zoomed in on the strong lines, fewer labels compete for room.
    await page.locator('.chart-box').focus();
    for (let i = 0; i < 4; i++) await page.keyboard.press('+');
    await shot('plot-05-hkl-labels-zoomed');
    await page.keyboard.press('r');
    await page.getByTestId('hkl-labels').uncheck();
    expect(await labels()).toEqual(without);
  }, 180_000);

  it('raised no script errors in the page', () => {
    expect(pageProblems(app.page).filter((p) => !p.startsWith('Failed to load resource'))).toEqual([]);
  });
});
