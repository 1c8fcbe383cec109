import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { createAppApi } from '../app/api.js';
import { defaultAppDataRoot } from '../node/app-data.js';
import { openAppWindow } from '../node/browser.js';
import { startHost, type RunningHost } from './server.js';

/** The project root: the nearest folder above this module holding package.json. */
export function packageRoot(): string {
  let dir = dirname(fileURLToPath(import.meta.url));
  while (!existsSync(join(dir, 'package.json'))) {
    const up = dirname(dir);
    if (up === dir) throw new Error('Crystallog cannot find its own installation folder (no package.json above it).');
    dir = up;
  }
  return dir;
}

export interface BrowserModeOptions {
  /** Why the desktop window is not used, told to the user. */
  reason?: string;
  /** Open the system's Chromium as an app window (default true). */
  open?: boolean;
  dataDir?: string;
  port?: number;
  log?: (line: string) => void;
}

/** Browser mode: the app's API and screens on a loopback-only host, opened in the system's Chromium when found. */
export async function runBrowserMode(options: BrowserModeOptions = {}): Promise<RunningHost> {
  const log = options.log ?? ((line: string) => process.stdout.write(`${line}\n`));
  const staticDir = join(packageRoot(), 'dist', 'renderer');
  if (!existsSync(join(staticDir, 'index.html'))) {
    throw new Error('The screens are not built yet: run "npm run build" first.');
  }
  const dataDir = options.dataDir ?? defaultAppDataRoot();
  const api = createAppApi({ mode: 'browser', dataDir });
  const host = await startHost({ api, staticDir, port: options.port });
  if (options.reason) log(`Crystallog opens in browser mode: ${options.reason}`);
  const hasDisplay = process.platform !== 'linux' || !!process.env.DISPLAY || !!process.env.WAYLAND_DISPLAY;
  const browser =
    options.open !== false && hasDisplay
      ? openAppWindow(host.launchUrl, join(dataDir, 'browser-profile'), (why) => log(`The browser window did not open: ${why}. Open this address by hand in Chromium, Chrome or Edge:\n  ${host.launchUrl}`))
      : null;
  if (browser) log(`Opened in ${browser}. If the window does not appear, open this address in Chromium or Chrome:`);
  else log('Open this address in Chromium, Chrome or Edge (it works only on this computer, for this launch):');
  log(`  ${host.launchUrl}`);
  log('Press Ctrl+C to stop Crystallog.');
  const stop = (): void => {
    void host.close().then(() => {
      api.close();
      process.exit(0);
    });
  };
  process.once('SIGINT', stop);
  process.once('SIGTERM', stop);
  return host;
}
