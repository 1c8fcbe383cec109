/**
 * A chemist's whole day in the browser, in order: open the demo, drop a file of their own, read the
 * headline, find the low-angle peak, add a reference typed by hand in 2θ, fit the instrument profile
 * from the right standard, read the sizes peak by peak, open the series, and export a report that
 * carries its figures and prints without clipped columns on A4 and Letter. Screenshots at 1280×720
 * and 1280×800 go to test-output/screenshots (day-*.png).
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DEMO_EXPOSURE_HOURS, DEMO_VARIANT_SIZES_NM } from '../../src/app/demo.js';
import { openApp, pageProblems, ROOT, SCREENSHOTS, type AppSession } from './harness.js';

/** The LaB6 standard, one sample per workup variant and one per exposure time. */
const DEMO_SAMPLE_COUNT = 1 + DEMO_VARIANT_SIZES_NM.length + DEMO_EXPOSURE_HOURS.length;

let app: AppSession;

/** The two window sizes a chemist's laptop gives (issue: usable at 1280×720). */
const SIZES = [
  [1280, 720],
  [1280, 800],
] as const;

async function shotsAtBothSizes(page: Page, name: string): Promise<void> {
  for (const [width, height] of SIZES) {
    await page.setViewportSize({ width, height });
    await page.waitForTimeout(150);
    await page.screenshot({ path: join(SCREENSHOTS, `day-${name}-${width}x${height}.png`) });
  }
}

/** Drop files on the window as the operating system would (a DataTransfer of File objects). */
async function dropFile(page: Page, name: string, text: string): Promise<void> {
  await page.evaluate(
    ([fileName, content]) => {
      const transfer = new DataTransfer();
      transfer.items.add(new File([content], fileName));
      window.dispatchEvent(new DragEvent('drop', { dataTransfer: transfer, bubbles: true, cancelable: true }));
    },
    [name, text] as const,
  );
}

const sampleItem = (page: Page, name: string) => page.locator('[data-testid="sample-list"] li', { hasText: name });

// Silicon under Cu Kα1: 111 at 28.443° 2θ (d 3.1356 Å), 220 at 47.303° (1.9201 Å), 311 at 56.123°
// (1.6375 Å) — NIST SRM 640 certificate values, from memory.
const SILICON_2THETA = '28.443 100 1 1 1\n47.303 55 2 2 0\n56.123 30 3 1 1';

/** The file a chemist brings: the shipped example of a film left 24 h in humid air (simulated, labelled so). */
const OWN_FILE = 'film-B_humid-air_24h.xy';
const OWN_TEXT = readFileSync(join(ROOT, 'examples', 'simulated_MAPbI3_humid-air_24h.xy'), 'utf8');

describe("a chemist's day in the app (headless Chromium)", () => {
  beforeAll(async () => {
    app = await openApp();
  }, 120_000);
  afterAll(async () => {
    await app?.close();
  });

  it('opens the demo project', async () => {
    const { page } = app;
    await page.getByTestId('open-demo').click();
    await page.getByText(`Demo project ready: the LaB6 standard and ${DEMO_SAMPLE_COUNT - 1} simulated samples.`, { exact: true }).waitFor({ timeout: 400_000 });
    expect(await page.locator('[data-testid="sample-list"] li').count()).toBe(DEMO_SAMPLE_COUNT);
    await shotsAtBothSizes(page, '01-demo');
  }, 420_000);

  it('drops a file of its own, reads the headline first, and is warned when the same file comes again', async () => {
    const { page } = app;
    await dropFile(page, OWN_FILE, OWN_TEXT);
    await sampleItem(page, OWN_FILE).waitFor({ timeout: 60_000 });
    await sampleItem(page, OWN_FILE).click();
    await page.getByTestId('headline').waitFor();
    const headline = (await page.getByTestId('headline').textContent()) ?? '';
    // The answer before the evidence: the target, what else with its share, the hydrate alarm, the size.
    expect(headline).toMatch(/^methylammonium lead iodide present/);
    expect(headline).toMatch(/methylammonium lead iodide monohydrate \d+(\.\d+)?( ± \d+(\.\d+)?)? wt %/);
    expect(headline).toMatch(/\d+ low-angle extra peaks? \(possible hydrolysis\)/);
    await shotsAtBothSizes(page, '02-own-file-headline');
    await dropFile(page, 'film-B_again.xy', OWN_TEXT);
    const warning = page.getByText(/film-B_again\.xy is the same file \(same checksum\) as film-B_humid-air_24h\.xy/);
    await warning.waitFor({ timeout: 60_000 });
    await page.screenshot({ path: join(SCREENSHOTS, 'day-02b-same-file-again-1280x800.png') });
    await page.getByRole('alert').filter({ hasText: 'same checksum' }).getByRole('button', { name: 'Dismiss' }).click();
  }, 120_000);

  it('finds the low-angle peaks below the target’s first line, flagged in the peak table too', async () => {
    const { page } = app;
    await sampleItem(page, OWN_FILE).first().click();
    const lowAngle = page.getByTestId('low-angle');
    await lowAngle.waitFor();
    const text = (await lowAngle.textContent()) ?? '';
    // MAPbI3's first strong line is near 14.1° 2θ (Cu Kα1); the monohydrate's lie below it.
    const positions = [...text.matchAll(/(\d+\.\d+)° 2θ/g)].map((m) => Number(m[1]));
    expect(positions.length).toBeGreaterThan(0);
    for (const p of positions) expect(p).toBeLessThan(14);
    // The same peaks are flagged in the peak table (the chart marks them in the same colour).
    const flagged = await page.locator('[data-testid="peak-table"] tbody tr.low-angle td:first-child').allTextContents();
    expect(flagged.map(Number)).toEqual(positions.map((p) => expect.closeTo(p, 1)));
    await shotsAtBothSizes(page, '03-low-angle');
  });

  it('adds a reference typed by hand in 2θ, stored as d for the wavelength given', async () => {
    const { page } = app;
    await page.setViewportSize({ width: 1280, height: 720 });
    await page.getByRole('tab', { name: /Library/ }).click();
    await page.getByRole('button', { name: 'New reference…' }).click();
    await page.getByTestId('ref-name').fill('silicon by hand');
    await page.getByTestId('ref-formula').fill('Si');
    await page.getByTestId('ref-source').fill('NIST SRM 640 certificate, typed by hand');
    await page.getByTestId('ref-column').selectOption('twoTheta');
    await page.getByTestId('ref-wavelength').fill('1.540593');
    await page.getByTestId('ref-lines').fill(SILICON_2THETA);
    // Long names and tags wrap: the library's table shows every column beside the form.
    for (const [width, height] of SIZES) {
      await page.setViewportSize({ width, height });
      expect(await page.getByTestId('library-table').evaluate((t) => t.scrollWidth - t.parentElement!.clientWidth)).toBeLessThanOrEqual(1);
    }
    await shotsAtBothSizes(page, '04-reference-by-hand');
    await page.getByTestId('ref-save').click();
    await page.getByTestId('reference-detail').waitFor();
    const stored = await page.evaluate(async () => {
      const r = await fetch('/api/library.get', { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify({ name: 'silicon by hand' }) });
      return ((await r.json()) as { result: { lines: Array<{ d: number }> } }).result.lines.map((l) => l.d);
    });
    // d = λ / (2 sin θ) (Bragg) with λ = 1.540593 Å.
    expect(stored[0]).toBeCloseTo(3.1356, 3);
    expect(stored[1]).toBeCloseTo(1.9201, 3);
    expect(stored[2]).toBeCloseTo(1.6375, 3);
  }, 60_000);

  it('catches 2θ values typed into the d column with a sentence', async () => {
    const { page } = app;
    await page.getByRole('button', { name: 'New reference…' }).click();
    await page.getByTestId('ref-name').fill('silicon typed wrong');
    await page.getByTestId('ref-source').fill('typed by hand');
    await page.getByTestId('ref-lines').fill('14.2 40\n28.443 100\n47.303 55');
    await page.getByTestId('ref-save').click();
    const message = page.getByRole('alert').filter({ hasText: /read as 2θ in degrees, not d/ });
    await message.waitFor();
    expect(await message.textContent()).toMatch(/^These values read as 2θ in degrees, not d: .*choose "2θ \(°\)" for the first column/);
    await page.screenshot({ path: join(SCREENSHOTS, 'day-04b-two-theta-as-d-1280x720.png') });
    await message.getByRole('button', { name: 'Dismiss' }).click();
    await page.getByRole('button', { name: 'Cancel' }).click().catch(() => undefined);
  }, 60_000);

  it('fits the instrument profile from the standard the pattern shows, and saves it', async () => {
    const { page } = app;
    await page.getByRole('tab', { name: /Instrument/ }).click();
    await page.getByTestId('instrument-sample').selectOption({ label: 'LaB6 standard' });
    // The standard is the reference the LaB6 pattern's analysis found in it, not the first in the list.
    await expect.poll(() => page.getByLabel('Standard reference').inputValue()).toBe('lanthanum hexaboride');
    await page.getByRole('button', { name: 'Fit', exact: true }).click();
    await page.getByText(/^Fitted: lanthanum hexaboride on LaB6 standard$/).waitFor();
    const peaksUsed = Number(await page.locator('[data-testid="instrument-result"] dt:text-is("Peaks used") + dd').textContent());
    expect(peaksUsed).toBeGreaterThanOrEqual(5);
    await shotsAtBothSizes(page, '05-instrument-fit');
    await page.getByRole('button', { name: 'Fit and save to project' }).click();
    // Saving analyses again every sample the new profile made out of date, so the series uses one profile.
    const saved = page.getByText(/^Instrument profile saved to the project; \d+ samples? analysed again with it\.$/);
    await saved.waitFor({ timeout: 120_000 });
    expect(Number(/(\d+) samples? analysed again/.exec((await saved.textContent()) ?? '')![1])).toBeGreaterThan(0);
    const stale = await page.evaluate(async () => {
      const r = await fetch('/api/project.state', { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: '{}' });
      return ((await r.json()) as { result: { samples: Array<{ name: string; stale: boolean }> } }).result.samples.filter((s) => s.stale).map((s) => s.name);
    });
    expect(stale).toEqual([]);
  }, 60_000);

  it('reads the sizes peak by peak: hkl, 2θ, breadths, size ± σ and the limit, with the size–strain plot', async () => {
    const { page } = app;
    await page.getByRole('tab', { name: /Samples/ }).click();
    await sampleItem(page, 'MAPbI3 as made').click();
    await page.getByTestId('headline').waitFor();
    expect(await page.getByTestId('stale').count()).toBe(0);
    const table = page.getByTestId('size-peaks');
    await table.waitFor();
    expect(await table.locator('thead th').allTextContents()).toEqual(['hkl', '2θ (°)', 'observed FWHM (°)', 'instrument FWHM (°)', 'sample FWHM (°)', 'size (nm)', 'limit']);
    const rows = await table.locator('tbody tr').evaluateAll((trs) => trs.map((tr) => [...tr.querySelectorAll('td')].map((td) => td.textContent ?? '')));
    expect(rows.length).toBeGreaterThanOrEqual(4);
    for (const [hkl, twoTheta, observed, instrument, sample, size, limit] of rows as string[][]) {
      expect(hkl).toMatch(/^\(-?\d+ -?\d+ -?\d+\)$|^—$/);
      expect(Number(twoTheta)).toBeGreaterThan(5);
      expect(Number(observed)).toBeGreaterThan(Number(instrument));
      expect(Number(sample)).toBeGreaterThanOrEqual(0);
      if (limit === '') expect(size).toMatch(/^\d+\.\d ± \d+\.\d nm$/);
      else expect(size).toMatch(/^> \d+ nm$|^—$/);
    }
    expect(await page.locator('figure.size-strain svg circle').count()).toBeGreaterThanOrEqual(4);
    // No column is hidden: at both window sizes the table fits the panel it sits in.
    for (const [width, height] of SIZES) {
      await page.setViewportSize({ width, height });
      expect(await table.evaluate((el) => el.scrollWidth - el.parentElement!.clientWidth)).toBeLessThanOrEqual(0);
    }
    await page.getByTestId('size-peaks').scrollIntoViewIfNeeded();
    await shotsAtBothSizes(page, '06-sizes');
  }, 120_000);

  it('opens the series by workup variant and by exposure time, with the growth curves', async () => {
    const { page } = app;
    await page.getByRole('tab', { name: /Series/ }).click();
    await page.getByTestId('series').waitFor();
    // Every sample was analysed with the same settings and profile, so the series compares them without a warning.
    expect(await page.getByTestId('series').textContent()).not.toMatch(/was analysed with other settings or another instrument profile/);
    await shotsAtBothSizes(page, '07-series-variant');
    await page.getByRole('button', { name: 'by exposure time' }).click();
    await page.locator('canvas[data-growth]').waitFor();
    // The comparison sentences wrap: no table on the screen is wider than its panel.
    for (const [width, height] of SIZES) {
      await page.setViewportSize({ width, height });
      const wider = await page.getByTestId('series').evaluate((screen) => [...screen.querySelectorAll('table')].filter((t) => t.scrollWidth > t.parentElement!.clientWidth + 1).map((t) => t.dataset.testid ?? t.className));
      expect(wider).toEqual([]);
    }
    await shotsAtBothSizes(page, '08-series-time');
  });

  let reportFile = '';

  it('exports an HTML report with every figure and each caution once', async () => {
    const { page } = app;
    await page.getByRole('tab', { name: /Report/ }).click();
    const download = page.waitForEvent('download');
    await page.getByTestId('export-html').click();
    const html = readFileSync(await (await download).path(), 'utf8');
    const samples = await page.evaluate(async () => {
      const r = await fetch('/api/project.state', { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: '{}' });
      return ((await r.json()) as { result: { samples: Array<{ name: string }> } }).result.samples.map((s) => s.name);
    });
    const patterns = [...html.matchAll(/<figure class="pattern"><svg[^>]*aria-label="([^"]*)"/g)].map((m) => m[1]!.replace(/ \(simulated\)$/, ''));
    expect(patterns.sort()).toEqual([...samples].sort());
    expect(html).toContain('obs − model');
    expect(html).toContain('peaks of methylammonium lead iodide monohydrate');
    expect(html.match(/<figure class="size-strain">/g)?.length ?? 0).toBeGreaterThanOrEqual(4);
    expect(html).toContain('By workup variant (error bars');
    expect(html).toContain('By exposure time (error bars');
    expect(html).toContain('<figure class="growth">');
    const cautions = [...html.matchAll(/<p class="caution">([^<]*)<\/p>/g)].map((m) => m[1]!);
    // The three every report carries, then what the composition lines assume (the same for every sample here).
    expect(cautions).toHaveLength(5);
    expect(cautions.filter((c) => /^(Weight fractions|Crystalline share)/.test(c))).toHaveLength(2);
    for (const c of cautions) expect(html.split(c).length - 1).toBe(1);
    // Not restated in each sample's reasons either.
    expect(html.match(/amorphous/g)).toHaveLength(1);
    expect(html.match(/apparent size/g)).toHaveLength(1);
    reportFile = join(SCREENSHOTS, 'day-report.html');
    writeFileSync(reportFile, html);
  });

  it('prints the report on A4 and on Letter (chosen in Settings) with no table or figure wider than the page', async () => {
    const { page } = app;
    // The paper size is an app setting on the Settings screen.
    await page.getByRole('tab', { name: /Settings/ }).click();
    expect(await page.getByTestId('paper-select').inputValue()).toBe('A4');
    // Printable width at the report's 12 mm side margins, in CSS px (96 per inch): A4 210 mm, Letter 8.5 in.
    const printable = { A4: ((210 - 24) / 25.4) * 96, Letter: (8.5 - 24 / 25.4) * 96 };
    for (const paper of ['A4', 'Letter'] as const) {
      if (paper === 'Letter') {
        await page.getByTestId('paper-select').selectOption('Letter');
        await page.getByText('Reports now print on Letter paper.').waitFor();
        await page.getByRole('tab', { name: /Report/ }).click();
        const download = page.waitForEvent('download');
        await page.getByTestId('export-html').click();
        writeFileSync(reportFile, readFileSync(await (await download).path(), 'utf8'));
      }
      const viewer = await app.context.newPage();
      await viewer.setViewportSize({ width: Math.floor(printable[paper]), height: 1000 });
      await viewer.emulateMedia({ media: 'print' });
      await viewer.goto(`file://${reportFile}`);
      expect(await viewer.content()).toContain(`@page{size:${paper};`);
      const overflows = await viewer.evaluate(() => {
        const pageWidth = document.documentElement.clientWidth;
        const wide = [...document.querySelectorAll('table, figure, svg')].filter((el) => el.getBoundingClientRect().right > pageWidth + 0.5).map((el) => el.tagName);
        const clipped = [...document.querySelectorAll('td, th')].filter((el) => el.scrollWidth > el.clientWidth + 1).map((el) => el.textContent);
        return { wide, clipped, scroll: document.documentElement.scrollWidth - pageWidth };
      });
      expect(overflows).toEqual({ wide: [], clipped: [], scroll: 0 });
      await viewer.screenshot({ path: join(SCREENSHOTS, `day-09-report-print-${paper}.png`) });
      // Chromium's own print to PDF takes the report's page size.
      const pdf = await viewer.pdf({ preferCSSPageSize: true, printBackground: true });
      const box = /MediaBox\s*\[\s*0 0 ([\d.]+) ([\d.]+)\s*\]/.exec(pdf.toString('latin1'));
      const [w, h] = [Number(box![1]), Number(box![2])];
      // A4 is 595.28 × 841.89 pt, Letter 612 × 792 pt (ISO 216; ANSI/ASME Y14.1).
      if (paper === 'A4') expect([w, h].map(Math.round)).toEqual([595, 842]);
      else expect([w, h]).toEqual([612, 792]);
      writeFileSync(join(SCREENSHOTS, `day-report-${paper}.pdf`), pdf);
      await viewer.close();
    }
    await page.getByRole('tab', { name: /Settings/ }).click();
    await page.getByTestId('paper-select').selectOption('A4');
    await page.getByText('Reports now print on A4 paper.').waitFor();
    await shotsAtBothSizes(page, '10-settings-paper');
  }, 120_000);

  it('starts a new project with its target phase, and the demo button goes back to the demo made before', async () => {
    const { page } = app;
    await page.getByRole('button', { name: 'New project' }).click();
    await page.getByTestId('new-project-name').fill('Batch 15 workup');
    await page.getByTestId('new-project-target').selectOption('methylammonium lead iodide');
    await page.getByRole('button', { name: 'Create' }).click();
    await page.getByRole('tab', { name: /Settings/ }).click();
    expect(await page.getByTestId('target-select').inputValue()).toBe('methylammonium lead iodide');
    await page.getByRole('button', { name: 'Demo project' }).click();
    await page.getByText('Opened the demo project made before (its simulated samples are all there).').waitFor({ timeout: 60_000 });
    const projects = await page.evaluate(async () => {
      const r = await fetch('/api/project.list', { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: '{}' });
      return ((await r.json()) as { result: Array<{ name: string; demo: boolean }> }).result;
    });
    expect(projects.filter((p) => p.demo)).toHaveLength(1);
    expect(projects.map((p) => p.name)).toContain('Batch 15 workup');
    await page.getByTestId('headline').waitFor();
    expect(await page.locator('[data-testid="sample-list"] li[aria-selected="true"]').textContent()).toMatch(/^MAPbI3 as made/);
    await shotsAtBothSizes(page, '11-demo-reopened');
  }, 120_000);

  it('raised no script errors in the page', () => {
    expect(pageProblems(app.page).filter((p) => !p.startsWith('Failed to load resource'))).toEqual([]);
  });
});
