/**
 * Parts of a chemist's day in the browser that need no demo project: a reference typed by hand in
 * 2θ, and 2θ values typed as d caught with a sentence.
 */
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { chromiumAvailable, openApp, pageProblems, SCREENSHOTS, type AppSession } from './harness.js';

let app: AppSession;

// Silicon under Cu Kα1: 111 at 28.443° 2θ (d 3.1356 Å), 220 at 47.303° (1.9201 Å), 311 at 56.123°
// (1.6375 Å) — NIST SRM 640 certificate values, from memory.
const SILICON_2THETA = '28.443 100 1 1 1\n47.303 55 2 2 0\n56.123 30 3 1 1';

describe("a chemist's day: references by hand (headless Chromium)", () => {
  beforeAll(async () => {
    if (!chromiumAvailable()) throw new Error('Chromium is missing at /usr/bin/chromium: apt-get install -y chromium (or set CRYSTALLOG_TEST_CHROMIUM)');
    app = await openApp();
  }, 120_000);
  afterAll(async () => {
    await app?.close();
  });

  it('adds a reference typed in 2θ and stores it as d for the wavelength given', async () => {
    const { page } = app;
    for (const [width, height] of [[1440, 900], [1280, 720]] as const) {
      await page.setViewportSize({ width, height });
      await page.getByRole('tab', { name: /Library/ }).click();
      await page.getByRole('button', { name: 'New reference…' }).click();
      await page.getByTestId('ref-name').fill(`silicon by hand ${width}`);
      await page.getByTestId('ref-formula').fill('Si');
      await page.getByTestId('ref-source').fill('NIST SRM 640 certificate, typed by hand');
      await page.getByTestId('ref-column').selectOption('twoTheta');
      await page.getByTestId('ref-wavelength').fill('1.540593');
      await page.getByTestId('ref-lines').fill(SILICON_2THETA);
      await page.screenshot({ path: join(SCREENSHOTS, `day-01-reference-by-hand-${width}x${height}.png`) });
      await page.getByTestId('ref-save').click();
      await page.getByTestId('reference-detail').waitFor();
    }
    const stored = await page.evaluate(async () => {
      const r = await fetch('/api/library.get', { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify({ name: 'silicon by hand 1440' }) });
      return ((await r.json()) as { result: { lines: Array<{ d: number }> } }).result.lines.map((l) => l.d);
    });
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
    expect(await page.getByTestId('ref-wavelength').isVisible()).toBe(false);
    await page.screenshot({ path: join(SCREENSHOTS, 'day-02-two-theta-as-d-1280x720.png') });
  }, 60_000);

  it('raised no script errors in the page', () => {
    expect(pageProblems(app.page)).toEqual([]);
  });
});
