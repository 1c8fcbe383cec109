import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { join } from 'node:path';

/** Places where a Chromium-family browser usually lives, per platform (common practice). */
function candidateBrowsers(env: NodeJS.ProcessEnv, platform: NodeJS.Platform): string[] {
  const fromEnv = env.CRYSTALLOG_BROWSER ? [env.CRYSTALLOG_BROWSER] : [];
  if (platform === 'win32') {
    const roots = [env['PROGRAMFILES'], env['PROGRAMFILES(X86)'], env.LOCALAPPDATA].filter((r): r is string => !!r);
    return [
      ...fromEnv,
      ...roots.flatMap((r) => [
        join(r, 'Google', 'Chrome', 'Application', 'chrome.exe'),
        join(r, 'Chromium', 'Application', 'chrome.exe'),
        join(r, 'Microsoft', 'Edge', 'Application', 'msedge.exe'),
      ]),
    ];
  }
  if (platform === 'darwin') {
    return [
      ...fromEnv,
      '/Applications/Google Chrome.app/Contents/MacOS/Google Chrome',
      '/Applications/Chromium.app/Contents/MacOS/Chromium',
      '/Applications/Microsoft Edge.app/Contents/MacOS/Microsoft Edge',
    ];
  }
  return [...fromEnv, '/usr/bin/chromium', '/usr/bin/chromium-browser', '/usr/bin/google-chrome', '/usr/bin/google-chrome-stable', '/usr/bin/microsoft-edge', '/snap/bin/chromium'];
}

export function findChromium(env: NodeJS.ProcessEnv = process.env, platform: NodeJS.Platform = process.platform): string | null {
  return candidateBrowsers(env, platform).find((path) => existsSync(path)) ?? null;
}

/**
 * Open the screens as an app window (no tabs, no address bar) of the system's Chromium, with a
 * profile of its own under the app-data folder. Returns the browser's path, or null when none was found.
 */
export function openAppWindow(url: string, profileDir: string, onEarlyExit: (why: string) => void = () => undefined): string | null {
  const browser = findChromium();
  if (!browser) return null;
  const args = [`--app=${url}`, `--user-data-dir=${profileDir}`, '--no-first-run', '--no-default-browser-check', '--window-size=1280,800'];
  // Chromium refuses to run as root with its sandbox on (common practice: root needs --no-sandbox).
  if (process.getuid?.() === 0) args.push('--no-sandbox');
  const child = spawn(browser, args, { detached: true, stdio: 'ignore' });
  const started = Date.now();
  child.on('error', (err) => onEarlyExit(`it could not be started (${err.message})`));
  child.on('exit', (code, signal) => {
    // A window the user closes lives longer than this; an exit within seconds is a browser that could not run.
    if (Date.now() - started < EARLY_EXIT_MS) onEarlyExit(`it closed at once (${signal ?? `exit code ${code}`})`);
  });
  child.unref();
  return browser;
}

/** An app window that ends sooner than this after launch did not open. */
const EARLY_EXIT_MS = 5000;
