import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { createAppApi } from '../../src/app/api.js';
import { startHost, type RunningHost } from '../../src/host/server.js';

/** Debian's Chromium; CRYSTALLOG_TEST_CHROMIUM may point elsewhere. */
export const CHROMIUM = process.env.CRYSTALLOG_TEST_CHROMIUM ?? '/usr/bin/chromium';
export const ROOT = join(import.meta.dirname, '..', '..');
export const SCREENSHOTS = join(ROOT, 'test-output', 'screenshots');

export interface AppSession {
  context: BrowserContext;
  page: Page;
  host: RunningHost;
  dataDir: string;
  close(): Promise<void>;
}

/** Build the screens, start browser mode on a fresh app-data folder, and open it in headless Chromium. */
export async function openApp(): Promise<AppSession> {
  // Never a silent skip: without Chromium the browser tests fail with what to install.
  if (!chromiumAvailable()) throw new Error(`Chromium is missing at ${CHROMIUM}: apt-get install -y chromium (or set CRYSTALLOG_TEST_CHROMIUM)`);
  execFileSync(process.execPath, [join(ROOT, 'scripts', 'build-renderer.mjs')], { stdio: 'ignore' });
  mkdirSync(SCREENSHOTS, { recursive: true });
  const dataDir = mkdtempSync(join(tmpdir(), 'crystallog-e2e-'));
  const api = createAppApi({ mode: 'browser', dataDir });
  const host = await startHost({ api, staticDir: join(ROOT, 'dist', 'renderer') });
  // A fresh profile folder per run (Playwright passes it as --user-data-dir).
  const profileDir = mkdtempSync(join(tmpdir(), 'crystallog-chromium-'));
  const context = await chromium.launchPersistentContext(profileDir, {
    executablePath: CHROMIUM,
    headless: true,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--no-first-run'],
    viewport: { width: 1280, height: 800 },
    acceptDownloads: true,
  });
  const page = context.pages()[0] ?? (await context.newPage());
  const problems: string[] = [];
  page.on('pageerror', (err) => problems.push(err.message));
  page.on('console', (msg) => {
    if (msg.type() === 'error') problems.push(msg.text());
  });
  (page as Page & { problems?: string[] }).problems = problems;
  await page.goto(host.launchUrl);
  return {
    context,
    page,
    host,
    dataDir,
    async close() {
      await context.close();
      await host.close();
      api.close();
      for (const dir of [profileDir, dataDir]) rmSync(dir, { recursive: true, force: true });
    },
  };
}

export const chromiumAvailable = (): boolean => existsSync(CHROMIUM);

/** Pick a file with the page's own file picker, opened by the button with this test id. */
export async function pickFile(page: Page, file: string, buttonTestId = 'open-patterns'): Promise<void> {
  const chooser = page.waitForEvent('filechooser');
  await page.getByTestId(buttonTestId).click();
  await (await chooser).setFiles(file);
}

/** From the first-run screen: a new empty project with this name and target phase, ready for files. */
export async function startEmptyProject(page: Page, name: string, target: string): Promise<void> {
  await page.getByRole('button', { name: 'Start an empty project' }).click();
  await page.getByTestId('new-project-name').fill(name);
  await page.getByTestId('new-project-target').selectOption(target);
  await page.getByRole('button', { name: 'Create' }).click();
  await page.getByTestId('open-patterns').waitFor();
}

export function pageProblems(page: Page): string[] {
  return (page as Page & { problems?: string[] }).problems ?? [];
}
