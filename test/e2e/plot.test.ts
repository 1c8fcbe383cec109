/**
 * The pattern plot in a real browser: decimated drawing of a long pattern with full resolution when
 * zoomed in, the cursor readout, a chart that follows the window, and hkl labels on matched peaks;
 * on the demo project, each phase's peaks marked in its colour, overlays normalised by area, the
 * A − B difference, and the series' waterfall and heat map.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { siliconPatternText } from '../app/fixtures.js';
import { openApp, pickFile, pageProblems, startEmptyProject, ROOT, SCREENSHOTS, type AppSession } from './harness.js';

let app: AppSession;
const shot = (name: string) => app.page.screenshot({ path: join(SCREENSHOTS, `${name}.png`) });

const drawnPoints = () => app.page.getByTestId('pattern-chart').evaluate((el) => Number((el as HTMLCanvasElement).dataset.drawnPoints));
const canvasWidth = () => app.page.getByTestId('pattern-chart').evaluate((el) => el.getBoundingClientRect().width);

describe('the pattern plot (headless Chromium)', () => {
  beforeAll(async () => {
    app = await openApp();
    const { page } = app;
    await page.setViewportSize({ width: 1440, height: 900 });
    await startEmptyProject(page, 'plot checks', 'methylammonium lead iodide');
  }, 120_000);
  afterAll(async () => {
    await app?.close();
  });

  it('draws a 100 000-point pattern decimated, and every point again when zoomed in', async () => {
    const { page } = app;
    const file = join(app.dataDir, 'silicon-long_100k.xy');
    writeFileSync(file, siliconPatternText({ points: 100_001, seed: 3 }));
    await pickFile(app.page, file);
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
    await pickFile(app.page, join(ROOT, 'examples', 'simulated_MAPbI3_humid-air_24h.xy'));
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
    expect(svg.match(/>low-angle extra(?! peaks<)[^<]*<\/text>/g)?.length).toBe(3);
    // The legend names each kind of mark, the target phase's by its name.
    expect(svg.match(/>low-angle extra peaks<\/text>/g)?.length).toBe(1);
    expect(svg).toContain('>methylammonium lead iodide</text>');
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

  it('marks a weak peak where the strong silicon 111 line’s Cu Kβ falls as a satellite, named on the plot', async () => {
    const { page } = app;
    // Si 111 (d 3.1356 Å) under Cu Kβ1 (1.392252 Å, xraylib 4.0) falls where Cu Kα1 (1.540593 Å) sees
    // d = 3.1356 × 1.540593 / 1.392252 = 3.4697 Å: a line there at 3 % of the pattern's scale.
    const file = join(app.dataDir, 'silicon-kbeta.xy');
    writeFileSync(file, siliconPatternText({ extraLowAngleD: 3.4697, extraScale: 0.03, seed: 11 }));
    await pickFile(app.page, file);
    await page.locator('[data-testid="sample-list"] li', { hasText: 'silicon-kbeta' }).click();
    await page.getByTestId('verdict').waitFor();
    await page.waitForFunction(() => document.querySelector('[data-testid="pattern-chart"]')?.getAttribute('aria-label')?.includes('silicon-kbeta'));
    const others = JSON.parse(await page.getByTestId('pattern-chart').evaluate((el) => (el as HTMLCanvasElement).dataset.otherMarks!)) as { satellite: number; lowAngle: number };
    console.log(`silicon with a Cu Kβ line: ${JSON.stringify(others)}`);
    expect(others.satellite).toBe(1);
    await page.getByTestId('peak-table').locator('tr', { hasText: 'Cu Kβ satellite?' }).waitFor();
    await shot('plot-06-satellite');
  }, 120_000);

  it('raised no script errors in the page', () => {
    expect(pageProblems(app.page).filter((p) => !p.startsWith('Failed to load resource'))).toEqual([]);
  });
});

describe('phase marks, normalised overlays, A − B and the series plots on the demo (headless Chromium)', () => {
  let demo: AppSession;
  const demoShot = (name: string) => demo.page.screenshot({ path: join(SCREENSHOTS, `${name}.png`) });
  const sample = (text: string) => demo.page.locator('[data-testid="sample-list"] li', { hasText: text });
  const data = (testId: string, key: string) => demo.page.getByTestId(testId).evaluate((el, k) => (el as HTMLElement).dataset[k] ?? '', key);

  beforeAll(async () => {
    demo = await openApp();
    await demo.page.getByTestId('open-demo').click();
    await demo.page.getByText(/Demo project ready/).waitFor({ timeout: 400_000 });
  }, 420_000);
  afterAll(async () => {
    await demo?.close();
  });

  it('marks each phase’s peaks in its own colour, named in the legend, with the scores folded away', async () => {
    const { page } = demo;
    await page.setViewportSize({ width: 1280, height: 720 });
    await sample('humid air 48 h').click();
    await page.getByTestId('verdict').waitFor();
    const phases = JSON.parse(await data('pattern-chart', 'phaseMarks')) as Array<{ phase: string; color: string; marks: number }>;
    const others = JSON.parse(await data('pattern-chart', 'otherMarks')) as { unexplained: number; satellite: number; lowAngle: number; missing: number };
    console.log(`humid air 48 h: ${phases.map((p) => `${p.phase} ${p.marks} peaks in ${p.color}`).join('; ')}; others ${JSON.stringify(others)}`);
    // The demo's truth: the perovskite, and after 48 h in humid air a hydrate with its low-angle line.
    expect(phases.length).toBeGreaterThanOrEqual(2);
    expect(phases[0]!.phase).toBe('methylammonium lead iodide');
    expect(phases.every((p) => p.marks > 0)).toBe(true);
    expect(new Set(phases.map((p) => p.color)).size).toBe(phases.length);
    expect(others.lowAngle).toBeGreaterThan(0);
    // The phases marked are those the candidates call present or uncertain, in the same colours as their swatches.
    const candidates = page.getByTestId('candidates');
    expect(await candidates.evaluate((el) => (el as HTMLDetailsElement).open)).toBe(false);
    const rows = await candidates.locator('tbody tr').evaluateAll((trs) =>
      trs.map((tr) => ({ name: tr.children[1]!.textContent!, verdict: tr.children[2]!.textContent!, swatch: (tr.querySelector(".swatch") as HTMLElement | null)?.style.backgroundColor ?? "" })),
    );
    expect(rows.filter((r) => r.verdict !== 'not-seen').map((r) => r.name).sort()).toEqual(phases.map((p) => p.phase).sort());
    for (const p of phases) {
      const [r, g, b] = [1, 3, 5].map((i) => parseInt(p.color.slice(i, i + 2), 16));
      expect(rows.find((row) => row.name === p.phase)!.swatch).toBe(`rgb(${r}, ${g}, ${b})`);
    }
    // The target's line in the card points to the scores rather than giving one.
    expect(await page.getByTestId('verdict-card').textContent()).toContain('methylammonium lead iodide: present (scores under “Candidates and scores”)');
    await demoShot('plot-10-phase-marks-1280x720');
    await page.setViewportSize({ width: 1280, height: 800 });
    await demoShot('plot-11-phase-marks-1280x800');
    await candidates.locator('summary').click();
    await page.getByTestId('candidates').locator('table').scrollIntoViewIfNeeded();
    await demoShot('plot-12-candidates-open-1280x800');
    await candidates.locator('summary').click();
    await page.emulateMedia({ colorScheme: 'dark' });
    await demoShot('plot-13-phase-marks-dark-1280x800');
    await page.emulateMedia({ colorScheme: 'light' });
  });

  it('normalises stacked samples by area over the range they share', async () => {
    const { page } = demo;
    await page.setViewportSize({ width: 1280, height: 720 });
    for (const hours of ['0 h', '24 h']) await sample(`humid air ${hours}`).getByRole('checkbox').check();
    await page.getByRole('group', { name: 'Normalise' }).getByRole('button', { name: 'by area' }).click();
    await page.getByTestId('pattern-chart').waitFor();
    expect(await data('pattern-chart', 'intensityTitle')).toBe('intensity (equal areas, mean = 100)');
    expect(await page.getByTestId('normalise-range').textContent()).toMatch(/^areas over \d+\.\d–\d+\.\d° 2θ, the range all share$/);
    expect(JSON.parse(await data('pattern-chart', 'curves'))).toHaveLength(3);
    expect(await page.getByTestId('normalise-note').count()).toBe(0);
    await demoShot('plot-14-overlay-by-area-1280x720');
    await page.getByRole('group', { name: 'Normalise' }).getByRole('button', { name: 'by peak' }).click();
    const peak = Number(await page.getByTestId('normalise-peak').inputValue());
    expect(peak).toBeGreaterThan(5);
    expect(await data('pattern-chart', 'intensityTitle')).toBe(`intensity (height near ${peak}° 2θ = 100)`);
    await page.getByRole('group', { name: 'Normalise' }).getByRole('button', { name: 'by area' }).click();
  });

  it('draws A − B of two samples on A’s 2θ points and says how', async () => {
    const { page } = demo;
    await page.getByTestId('difference-panel').locator('summary').click();
    await page.getByTestId('difference-a').selectOption({ label: 'humid air 48 h' });
    await page.getByTestId('difference-b').selectOption({ label: 'humid air 0 h' });
    await page.waitForFunction(() => Number((document.querySelector('[data-testid="difference-chart"]') as HTMLCanvasElement | null)?.dataset.drawnPoints ?? 0) > 0);
    const note = (await page.getByTestId('difference-note').textContent()) ?? '';
    console.log(`difference: ${note}`);
    expect(note).toMatch(/^humid air 48 h − humid air 0 h, each normalised by area first; (humid air 0 h interpolated linearly onto the 2θ points of humid air 48 h|both measured on the same 2θ points \(no interpolation\)), over \d+\.\d\d–\d+\.\d\d° 2θ \(the range both cover\)\.$/);
    expect(await data('difference-chart', 'intensityTitle')).toBe('A − B (normalised)');
    await page.getByTestId('difference-chart').scrollIntoViewIfNeeded();
    const box = (await page.getByTestId('difference-chart').boundingBox())!;
    await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2);
    expect(await page.locator('.difference-box [data-testid="chart-readout"]').textContent()).toMatch(/·\s+A − B normalised -?\d+ \(point at \d+\.\d{3}°\)$/);
    await page.getByTestId('difference-chart').scrollIntoViewIfNeeded();
    await demoShot('plot-15-difference-1280x720');
    await page.getByTestId('difference-panel').locator('summary').click();
    for (const hours of ['0 h', '24 h']) await sample(`humid air ${hours}`).getByRole('checkbox').uncheck();
  });

  it('shows the exposure series as a waterfall and a heat map with its colour key', async () => {
    const { page } = demo;
    await page.getByRole('tab', { name: /Series/ }).click();
    await page.getByRole('button', { name: 'by exposure time' }).click();
    await page.getByTestId('heat-map').waitFor();
    await page.waitForFunction(() => Number((document.querySelector('[data-testid="heat-map"]') as HTMLCanvasElement | null)?.dataset.rows ?? 0) > 0);
    const rows = await page.locator('[data-testid="series"] table.grid').first().locator('tbody tr').count();
    const curves = JSON.parse(await data('waterfall', 'curves')) as string[];
    const heat = { rows: Number(await data('heat-map', 'rows')), columns: Number(await data('heat-map', 'columns')) };
    console.log(`exposure series: ${rows} samples; waterfall curves ${curves.join(', ')}; heat map ${heat.rows} bands × ${heat.columns} columns`);
    expect(curves.length).toBe(rows);
    expect(heat.rows).toBe(rows);
    expect(heat.columns).toBeGreaterThan(300);
    for (const [width, height] of [[1280, 720], [1280, 800]] as const) {
      await page.setViewportSize({ width, height });
      await page.waitForTimeout(250);
      await page.getByTestId('series-patterns').scrollIntoViewIfNeeded();
      await demoShot(`plot-16-series-patterns-${width}x${height}`);
    }
  });

  it('raised no script errors in the page', () => {
    expect(pageProblems(demo.page).filter((p) => !p.startsWith('Failed to load resource'))).toEqual([]);
  });
});
