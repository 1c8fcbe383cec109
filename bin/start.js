#!/usr/bin/env node
// `npm start`: the desktop window when the Electron runtime is installed and can run here; otherwise
// browser mode, saying why. Flags: --browser (always browser mode), --no-open (print the address only).
import { spawn } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const args = process.argv.slice(2);

/** The Electron executable, or the reason it cannot be used (never triggers a download). */
function electronRuntime() {
  if (args.includes('--browser')) return { reason: 'asked for with --browser' };
  if (process.platform === 'linux' && !process.env.DISPLAY && !process.env.WAYLAND_DISPLAY) {
    return { reason: 'there is no graphical display here (DISPLAY and WAYLAND_DISPLAY are unset)' };
  }
  let dir;
  try {
    dir = dirname(createRequire(import.meta.url).resolve('electron/package.json'));
  } catch {
    return { reason: 'the electron package is not installed' };
  }
  const pathFile = join(dir, 'path.txt');
  const relative = existsSync(pathFile) ? readFileSync(pathFile, 'utf8').trim() : '';
  const executable = relative ? join(dir, 'dist', relative) : '';
  if (!executable || !existsSync(executable)) {
    return { reason: 'the Electron runtime was not downloaded when the packages were installed (offline install?)' };
  }
  if (!existsSync(join(root, 'dist', 'electron', 'main.js'))) return { reason: 'the desktop shell is not built (run "npm run build")' };
  return { executable };
}

async function browserMode(reason) {
  if (!existsSync(join(root, 'dist', 'src', 'host', 'main.js'))) {
    process.stderr.write('Crystallog is not built yet: run "npm run build" first.\n');
    process.exitCode = 1;
    return;
  }
  const { runBrowserMode } = await import('../dist/src/host/main.js');
  try {
    await runBrowserMode({ reason, open: !args.includes('--no-open') });
  } catch (err) {
    process.stderr.write(`Crystallog could not start: ${err instanceof Error ? err.message : String(err)}\n`);
    process.exitCode = 1;
  }
}

const runtime = electronRuntime();
if (runtime.executable) {
  const started = Date.now();
  const child = spawn(runtime.executable, [root], { stdio: 'inherit' });
  child.on('error', (err) => void browserMode(`the Electron runtime could not start (${err.message})`));
  child.on('exit', (code) => {
    // A crash within seconds of launch means this machine cannot run it: fall back rather than leave the user with nothing.
    if (code !== 0 && Date.now() - started < 5000) void browserMode(`the Electron runtime stopped at launch (exit code ${code})`);
    else process.exitCode = code ?? 0;
  });
} else {
  void browserMode(runtime.reason);
}
