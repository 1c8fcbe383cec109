/**
 * `npm start` (bin/start.js) where the desktop window cannot run: browser mode on 127.0.0.1, saying why,
 * with the screens served to the holder of the launch token only. Runs the built app (`npm test` builds it).
 */
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';

const start = fileURLToPath(new URL('../../bin/start.js', import.meta.url));
const dataDir = mkdtempSync(join(tmpdir(), 'crystallog-start-test-'));
afterAll(() => rmSync(dataDir, { recursive: true, force: true }));

/** Start the app with the given arguments and display; resolve with its first lines once it prints the address. */
function launch(args: string[], display: string | undefined): Promise<{ lines: string[]; stop: () => void }> {
  const env: NodeJS.ProcessEnv = { ...process.env, CRYSTALLOG_DATA_DIR: dataDir, DISPLAY: display, WAYLAND_DISPLAY: undefined };
  const child = spawn(process.execPath, [start, '--no-open', ...args], { env, stdio: ['ignore', 'pipe', 'pipe'] });
  let text = '';
  return new Promise((resolve, reject) => {
    const onData = (chunk: Buffer): void => {
      text += chunk.toString('utf8');
      if (/token=\S+/.test(text)) resolve({ lines: text.split('\n'), stop: () => child.kill('SIGINT') });
    };
    child.stdout.on('data', onData);
    child.stderr.on('data', onData);
    child.on('exit', (code) => reject(new Error(`start.js ended (exit ${code}) before printing an address:\n${text}`)));
  });
}

describe('npm start without a desktop window', () => {
  it('opens browser mode on 127.0.0.1, says why, and serves the screens only with the launch token', async () => {
    const app = await launch([], undefined);
    try {
      expect(app.lines[0]).toBe('Crystallog opens in browser mode: there is no graphical display here (DISPLAY and WAYLAND_DISPLAY are unset)');
      const address = app.lines.find((l) => l.includes('token='))!.trim();
      const url = new URL(address);
      expect(url.hostname).toBe('127.0.0.1');
      // The launch link swaps the token for a cookie, then the page loads with it.
      const link = await fetch(address, { redirect: 'manual' });
      expect(link.status).toBe(303);
      const cookie = (link.headers.get('set-cookie') ?? '').split(';')[0];
      const page = await fetch(`${url.origin}/`, { headers: { cookie } });
      expect(page.status).toBe(200);
      expect(await page.text()).toContain('Crystallog');
      const withoutToken = await fetch(`${url.origin}/`);
      expect(withoutToken.status).not.toBe(200);
    } finally {
      app.stop();
    }
  }, 30_000);

  it('goes straight to browser mode when asked with --browser', async () => {
    const app = await launch(['--browser'], ':99');
    try {
      expect(app.lines[0]).toBe('Crystallog opens in browser mode: asked for with --browser');
    } finally {
      app.stop();
    }
  }, 30_000);
});
