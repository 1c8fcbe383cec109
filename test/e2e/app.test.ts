import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_EXPOSURE_HOURS, DEMO_VARIANT_SIZES_NM } from '../../src/app/demo.js';
import { SILICON, siliconPatternText } from '../app/fixtures.js';
import { openApp, pickFile, pageProblems, SCREENSHOTS, type AppSession } from './harness.js';

/** The LaB6 standard, one sample per workup variant and one per exposure time. */
const DEMO_SAMPLE_COUNT = 1 + DEMO_VARIANT_SIZES_NM.length + DEMO_EXPOSURE_HOURS.length;

let app: AppSession;
const shot = (name: string) => app.page.screenshot({ path: join(SCREENSHOTS, `${name}.png`) });

describe('the app in a real browser (browser mode, headless Chromium)', () => {
  beforeAll(async () => {
    // No silent skip: these tests need Debian's Chromium (.ci/run installs it).
    app = await openApp();
  });
  afterAll(async () => {
    await app?.close();
  });

  it('offers the demo project on first run and opens it', async () => {
    const { page } = app;
    await page.getByTestId('open-demo').waitFor();
    await shot('01-welcome');
    await page.getByTestId('open-demo').click();
    await page.getByTestId('progress').waitFor({ timeout: 60_000 });
    await shot('01b-demo-progress');
    await page.getByText(/Demo project ready/).waitFor({ timeout: 400_000 });
    expect(await page.locator('[data-testid="sample-list"] li').count()).toBe(DEMO_SAMPLE_COUNT);
    expect(await page.getByTestId('demo-truth').textContent()).toMatch(/simulated/i);
  }, 420_000);

  it('shows the verdict and the crystallite size of a sample', async () => {
    const { page } = app;
    await page.locator('[data-testid="sample-list"] li', { hasText: 'MAPbI3 as made' }).click();
    await page.getByTestId('verdict').waitFor();
    expect(await page.getByTestId('verdict').textContent()).toBe('Target');
    // The answer comes first: target verdict word and size in one sentence above the evidence.
    expect(await page.getByTestId('headline').textContent()).toMatch(/^methylammonium lead iodide present.* · size \d+\.\d ± \d+\.\d nm\.$/);
    expect(await page.getByTestId('size').textContent()).toMatch(/Scherrer: \d+\.\d ± \d+\.\d nm/);
    // The cursor readout: 2θ under the pointer and its d by Bragg's law at Cu Kα1 (1.540593 Å, the demo's anode).
    const canvas = (await page.getByTestId('pattern-chart').boundingBox())!;
    await page.mouse.move(canvas.x + canvas.width * 0.4, canvas.y + canvas.height * 0.4);
    const reading = /^2θ (\d+\.\d+)°\s+·\s+d (\d+\.\d+) Å/.exec((await page.getByTestId('chart-readout').textContent()) ?? '');
    expect(reading).not.toBeNull();
    const [twoTheta, d] = [Number(reading![1]), Number(reading![2])];
    expect(twoTheta).toBeGreaterThan(5);
    expect(twoTheta).toBeLessThan(60);
    expect(d).toBeCloseTo(1.540593 / (2 * Math.sin((twoTheta * Math.PI) / 360)), 3);
    await shot('02-samples-as-made');
  });

  it('flags the low-angle extra peak of the sample left 48 h in humid air', async () => {
    const { page } = app;
    await page.locator('[data-testid="sample-list"] li', { hasText: 'humid air 48 h' }).click();
    await page.getByTestId('low-angle').waitFor();
    expect(await page.getByTestId('low-angle').textContent()).toMatch(/Low-angle extra peaks? below the target’s first line: \d+\.\d+° 2θ/);
    expect(await page.getByTestId('verdict').textContent()).toBe('Target with extra peaks');
    expect(await page.getByTestId('headline').textContent()).toMatch(/\d+ low-angle extra peaks? \(possible hydrolysis\) · size \d+\.\d ± \d+\.\d nm \(group fit/);
    // Every target line overlaps the hydrate's by now: the size comes from the constrained group fit (simulated at 48 nm).
    const size = await page.getByTestId('size').textContent();
    expect(size).toMatch(/^Constrained group fit: \d+\.\d ± \d+\.\d nm$/);
    expect(Math.abs(Number(/: ([\d.]+) ±/.exec(size!)![1]) / 48 - 1)).toBeLessThan(0.1);
    await shot('03-samples-humid-48h');
  });

  it('stacks several samples with an offset and switches the axis to d', async () => {
    const { page } = app;
    for (const hours of ['0 h', '24 h']) await page.locator('[data-testid="sample-list"] li', { hasText: `humid air ${hours}` }).getByRole('checkbox').check();
    await page.getByRole('group', { name: 'Axis' }).getByRole('button', { name: 'd' }).click();
    await page.getByRole('group', { name: 'Intensity' }).getByRole('button', { name: 'log' }).click();
    await page.getByRole('group', { name: 'Axis' }).getByRole('button', { name: 'Q' }).click();
    await shot('04c-overlay-q-log');
    await page.getByRole('group', { name: 'Axis' }).getByRole('button', { name: 'd' }).click();
    await page.getByRole('group', { name: 'Intensity' }).getByRole('button', { name: '√' }).click();
    await page.getByTestId('pattern-chart').waitFor();
    await shot('04-overlay-d-sqrt');
    for (const [button, check] of [
      ['PNG', (bytes: Buffer) => expect(bytes.subarray(1, 4).toString('latin1')).toBe('PNG')],
      [
        'SVG',
        (bytes: Buffer) => {
          const svg = bytes.toString('utf8');
          expect(svg.startsWith('<svg')).toBe(true);
          expect(svg.trimEnd().endsWith('</svg>')).toBe(true);
          expect(svg.match(/<polyline/g)?.length).toBe(3);
          expect(svg).toContain('d-spacing (Å)');
          writeFileSync(join(SCREENSHOTS, 'exported-plot.svg'), svg);
        },
      ],
    ] as const) {
      const download = page.waitForEvent('download');
      await page.getByRole('button', { name: button, exact: true }).click();
      check(readFileSync(await (await download).path()));
    }
    await page.getByRole('group', { name: 'Axis' }).getByRole('button', { name: '2θ' }).click();
    await page.getByRole('group', { name: 'Intensity' }).getByRole('button', { name: 'linear' }).click();
    for (const hours of ['0 h', '24 h']) await page.locator('[data-testid="sample-list"] li', { hasText: `humid air ${hours}` }).getByRole('checkbox').uncheck();
  });

  it('sizes the chart to the window: taller and wider at 1440×900 than at 1280×720', async () => {
    const { page } = app;
    const chartSize = async (width: number, height: number): Promise<{ height: number; canvasWidth: number }> => {
      await page.setViewportSize({ width, height });
      await page.waitForTimeout(200);
      return {
        height: await page.locator('.chart-box').first().evaluate((el) => el.getBoundingClientRect().height),
        canvasWidth: await page.getByTestId('pattern-chart').evaluate((el) => el.getBoundingClientRect().width),
      };
    };
    const large = await chartSize(1440, 900);
    const small = await chartSize(1280, 720);
    await shot('04d-samples-1280x720');
    await page.setViewportSize({ width: 1280, height: 800 });
    // styles.css: 48 % of the window height (clamped to 240–720 px), so 345.6 px and 432 px.
    expect(small.height).toBeCloseTo(0.48 * 720, 0);
    expect(large.height).toBeCloseTo(0.48 * 900, 0);
    // The canvas follows the window's width too: the sample list keeps its width, the plot takes the rest.
    expect(large.canvasWidth - small.canvasWidth).toBeCloseTo(160, -1);
  });

  it('renders the exported SVG as a picture of the plot', async () => {
    const viewer = await app.context.newPage();
    await viewer.goto(`file://${join(SCREENSHOTS, 'exported-plot.svg')}`);
    await viewer.screenshot({ path: join(SCREENSHOTS, '04b-exported-svg.png') });
    await viewer.close();
  });

  it('loads a 10 000-point pattern file and shows its verdict', async () => {
    const { page } = app;
    const file = join(app.dataDir, 'silicon-check_10k.xy');
    writeFileSync(file, siliconPatternText({ points: 10001 }));
    await pickFile(app.page, file);
    await page.locator('[data-testid="sample-list"] li', { hasText: 'silicon-check_10k' }).waitFor();
    await page.getByTestId('verdict').waitFor();
    const timings = await page.evaluate(() => (window as unknown as { crystallogTimings: { lastAddMs: number; lastDrawMs: number } }).crystallogTimings);
    // The silicon test reference is not in the demo library yet, so this is not the target (MAPbI3).
    expect(await page.getByTestId('verdict').textContent()).toBe('Not the target');
    console.log(`10 000-point pattern: analysed in ${timings.lastAddMs.toFixed(0)} ms, drawn in ${timings.lastDrawMs.toFixed(0)} ms`);
  });

  it('pans a 50 000-point pattern smoothly', async () => {
    const { page } = app;
    const file = join(app.dataDir, 'silicon-long_50k.xy');
    writeFileSync(file, siliconPatternText({ points: 50001, seed: 77 }));
    await pickFile(app.page, file);
    await page.locator('[data-testid="sample-list"] li', { hasText: 'silicon-long_50k' }).waitFor();
    await page.getByTestId('verdict').waitFor();
    // Zoom in first, as one does before panning, then time each pan step (chart update with decimation).
    const msPerPan = await page.evaluate(() => {
      const box = document.querySelector<HTMLElement>('.chart-box')!;
      box.focus();
      const key = (k: string): void => void box.dispatchEvent(new KeyboardEvent('keydown', { key: k, bubbles: true }));
      for (let i = 0; i < 4; i++) key('+');
      const start = performance.now();
      for (let i = 0; i < 30; i++) key(i < 15 ? 'ArrowLeft' : 'ArrowRight');
      return (performance.now() - start) / 30;
    });
    await shot('05b-pan-50k');
    console.log(`50 000-point pattern: ${msPerPan.toFixed(1)} ms per pan step`);
    // A frame at 60 Hz is 16.7 ms (common practice for "smooth"); allow for the shared test machine.
    expect(msPerPan).toBeLessThan(50);
  });

  it('rejects a malformed file with a readable sentence', async () => {
    const { page } = app;
    const file = join(app.dataDir, 'broken.xy');
    writeFileSync(file, '2theta counts\n10.00 120\n10.02 lots\n');
    await pickFile(app.page, file);
    const alert = page.getByRole('alert').first();
    await alert.waitFor();
    const text = (await alert.textContent()) ?? '';
    expect(text).toMatch(/broken\.xy, line 3: .*not a number/);
    expect(text).not.toMatch(/at .*\.(ts|js):\d+/);
    // The same file refused again counts up on the same line instead of stacking another.
    await pickFile(app.page, file);
    await page.getByRole('alert').filter({ hasText: '(×2)' }).waitFor();
    expect(await page.getByRole('alert').count()).toBe(1);
    await shot('05-malformed-file');
    await alert.getByRole('button', { name: 'Dismiss' }).click();
  });

  it('adds a reference in the library and finds it by search', async () => {
    const { page } = app;
    await page.getByRole('tab', { name: /Library/ }).click();
    await page.getByRole('button', { name: 'New reference…' }).click();
    await page.getByTestId('ref-name').fill(SILICON.name);
    await page.getByTestId('ref-formula').fill('Si');
    await page.getByTestId('ref-tags').fill('standard');
    await page.getByTestId('ref-source').fill(SILICON.source);
    await page.getByTestId('ref-lines').fill(SILICON.lines.map((l) => `${l.d.toFixed(5)} ${l.intensity} ${l.hkl!.join(' ')}`).join('\n'));
    await page.getByTestId('ref-save').click();
    await page.getByTestId('reference-detail').waitFor();
    await page.getByTestId('library-search').fill('silicon test');
    await expect.poll(() => page.getByTestId('library-table').locator('tbody tr').count()).toBe(1);
    expect(await page.getByTestId('library-table').textContent()).toContain(SILICON.name);
    await shot('06-library');
  });

  it('imports a CSV peak list into the library', async () => {
    const { page } = app;
    const file = join(app.dataDir, 'sodium-chloride.csv');
    // NaCl lines of NBS Circular 539 (Swanson & Fuyat, 1953), from memory.
    writeFileSync(file, '# name: sodium chloride test\n# formula: NaCl\n# source: NBS Circular 539 (from memory)\nd,intensity\n3.258,13\n2.821,100\n1.994,55\n1.628,15\n');
    await pickFile(app.page, file, 'library-import');
    await page.getByText('Imported sodium chloride test.').waitFor();
    await expect.poll(() => page.getByTestId('reference-detail').textContent()).toContain('NBS Circular 539');
  });

  it('shows the instrument profile fitted to the LaB6 standard', async () => {
    const { page } = app;
    await page.getByRole('tab', { name: /Instrument/ }).click();
    await page.getByTestId('instrument-result').waitFor();
    expect(await page.getByTestId('instrument-result').textContent()).toMatch(/U \(deg²\)/);
    await shot('07-instrument');
  });

  it('keeps the analysis settings per project, reachable by keyboard (Alt+6)', async () => {
    const { page } = app;
    await page.keyboard.press('Alt+6');
    await page.getByTestId('target-select').waitFor();
    expect(await page.getByTestId('target-select').inputValue()).toBe('methylammonium lead iodide');
    await shot('07b-settings');
  });

  it('re-analyses every sample when a setting changes: sizes scale with the Scherrer K', async () => {
    const { page } = app;
    const sizeOf = async (): Promise<number> => {
      const item = (await app.page.locator('[data-testid="sample-list"] li', { hasText: 'MAPbI3 as made' }).textContent()) ?? '';
      return Number(/(\d+\.\d) ± /.exec(item)![1]);
    };
    await page.keyboard.press('Alt+1');
    const before = await sizeOf();
    await page.keyboard.press('Alt+6');
    await page.getByLabel('Scherrer K').fill('0.94');
    await page.getByRole('button', { name: 'Save and re-analyse' }).click();
    await page.getByText(/Settings saved; \d+ samples re-analysed/).waitFor({ timeout: 120_000 });
    await page.keyboard.press('Alt+1');
    // Scherrer: D = Kλ/(β cosθ), so every size scales with K (Scherrer 1918; linear in K by the formula).
    expect(Math.abs((await sizeOf()) - (before * 0.94) / 0.9)).toBeLessThan(0.11);
    await page.evaluate(() => document.querySelectorAll('#messages .message').forEach((m) => m.remove()));
    await page.keyboard.press('Alt+6');
    await page.getByLabel('Scherrer K').fill('0.9');
    await page.getByRole('button', { name: 'Save and re-analyse' }).click();
    await page.getByText(/Settings saved; \d+ samples re-analysed/).waitFor({ timeout: 120_000 });
  }, 300_000);

  it('shows the series by variant, by exposure time and by annealing temperature', async () => {
    const { page } = app;
    const column = (n: number) => page.getByTestId('series').locator(`table.grid:not([data-testid]) tbody tr td:nth-child(${n})`).allTextContents();
    await page.getByRole('tab', { name: /Series/ }).click();
    await page.getByTestId('series').waitFor();
    expect(await column(2)).toContain('annealed 100 °C');
    await shot('08-series-variant');
    await page.getByRole('button', { name: 'by exposure time' }).click();
    await page.getByRole('columnheader', { name: 'exposure' }).waitFor();
    expect(await column(2)).toEqual(['0 h', '2 h', '6 h', '24 h', '48 h']);
    await shot('09-series-time');
    await page.getByRole('button', { name: 'by temperature' }).click();
    await page.getByRole('columnheader', { name: 'temperature' }).waitFor();
    expect(await column(2)).toEqual(['80 °C', '100 °C', '120 °C']);
    // An ordered series is tested by its trend, not by all pairs.
    await expect.poll(() => page.getByTestId('comparisons').textContent()).toMatch(/weighted regression slope: the size changes along the series: [\d.]+ ± \S+ nm per °C/);
    await shot('09b-series-temperature');
  });

  it('exports an HTML report carrying settings, versions and cautions', async () => {
    const { page } = app;
    await page.getByRole('tab', { name: /Report/ }).click();
    const download = page.waitForEvent('download');
    await page.getByTestId('export-html').click();
    const path = await (await download).path();
    const html = readFileSync(path, 'utf8');
    expect(html).toContain('every pattern in it is simulated');
    expect(html).toContain('Truth the patterns were simulated from');
    expect(html).toContain('matching tolerance');
    expect(html).toMatch(/methylammonium lead iodide<\/td><td>\d+/);
    expect(html).toContain('lead-containing');
    expect(html).toMatch(/\d+\.\d\d° \(d \d+\.\d\d Å, methylammonium lead iodide monohydrate\)/);
    expect(html).toMatch(/Crystallog \d+\.\d+\.\d+/);
    // The humid-air samples whose every target line overlaps carry the group fit's size, labelled so.
    expect(html).toMatch(/\d+\.\d ± \d+\.\d nm \(constrained group fit: every line overlaps another phase\)/);
    await shot('10-report');
    const copy = join(SCREENSHOTS, 'exported-report.html');
    writeFileSync(copy, html);
    const viewer = await app.context.newPage();
    await viewer.setViewportSize({ width: 1280, height: 1600 });
    await viewer.goto(`file://${copy}`);
    await viewer.screenshot({ path: join(SCREENSHOTS, '10b-report-html.png'), fullPage: false });
    await viewer.close();
  });

  /** Drop files on the window as the operating system would (a DataTransfer of File objects). */
  const dropFiles = (names: string[], texts: string[]) =>
    app.page.evaluate(
      ([fileNames, contents]) => {
        const transfer = new DataTransfer();
        contents.forEach((text, i) => transfer.items.add(new File([text], fileNames[i]!)));
        window.dispatchEvent(new DragEvent('drop', { dataTransfer: transfer, bubbles: true, cancelable: true }));
      },
      [names, texts] as const,
    );

  it('shows progress for a 100-file drop and finishes it', async () => {
    const { page } = app;
    await page.getByRole('tab', { name: /Samples/ }).click();
    const texts = Array.from({ length: 100 }, (_, i) => siliconPatternText({ points: 10001, seed: 400 + i }));
    const started = Date.now();
    await dropFiles(texts.map((_, i) => `night-${i}.xy`), texts);
    await page.getByTestId('progress').waitFor();
    await shot('11-progress');
    await page.getByText('100 patterns added.').waitFor({ timeout: 120_000 });
    const seconds = (Date.now() - started) / 1000;
    // Printed for the record only: speed targets are judged in `npm run bench`, not in a timed test.
    console.log(`100-file drop (10 001 points each): ${seconds.toFixed(1)} s`);
    expect(await page.locator('[data-testid="sample-list"] li', { hasText: 'night-' }).count()).toBe(100);
  }, 150_000);

  it('stops a drop when Cancel is pressed', async () => {
    const { page } = app;
    const texts = Array.from({ length: 40 }, (_, i) => siliconPatternText({ points: 10001, seed: 40 + i }));
    // Press Cancel as soon as the progress box shows (from inside the page, so the click is not late).
    await page.evaluate(() => {
      const observer = new MutationObserver(() => {
        const cancel = document.querySelector<HTMLButtonElement>('[data-testid="progress"] button');
        if (cancel) {
          cancel.click();
          observer.disconnect();
        }
      });
      observer.observe(document.body, { childList: true });
    });
    await dropFiles(texts.map((_, i) => `drop-${i}.xy`), texts);
    await page.getByText(/patterns? added before you cancelled/).waitFor({ timeout: 60_000 });
    const added = await page.locator('[data-testid="sample-list"] li', { hasText: 'drop-' }).count();
    expect(added).toBeGreaterThan(0);
    expect(added).toBeLessThan(40);
  }, 120_000);

  it('raised no script errors in the page', () => {
    // Refused requests (the malformed file) show in the console as failed loads; those are expected.
    expect(pageProblems(app.page).filter((p) => !p.startsWith('Failed to load resource'))).toEqual([]);
  });
});
