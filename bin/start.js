#!/usr/bin/env node
// `npm start`: the desktop window when the Electron runtime is installed and can run here; otherwise
// browser mode, saying why. Flags: --browser (always browser mode), --no-open (print the address only).
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { homedir } from 'node:os';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const args = process.argv.slice(2);

/** How long the first launch may spend fetching the Electron runtime before browser mode is used instead. */
const RUNTIME_FETCH_LIMIT_MS = 180_000;

/** The Electron executable, or the reason it cannot be used. */
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
  if (!existsSync(join(root, 'dist', 'electron', 'main.js'))) return { reason: 'the desktop shell is not built (run "npm run build")' };
  let executable = installedExecutable(dir);
  if (!executable) {
    // The electron package installs without its runtime and fetches it at first launch, with its own downloader.
    const cached = cachedRuntimeZip(dir);
    process.stderr.write(
      cached
        ? 'Crystallog: unpacking the desktop runtime (Electron) from its download cache for the first launch…\n'
        : 'Crystallog: the desktop runtime (Electron) is not on this computer yet; fetching it (about 100 MB) for the first launch…\n',
    );
    const fetched = spawnSync(process.execPath, [join(dir, 'install.js')], { stdio: ['ignore', 'inherit', 'pipe'], encoding: 'utf8', timeout: RUNTIME_FETCH_LIMIT_MS });
    executable = installedExecutable(dir);
    if (!executable) {
      const firstLine = (fetched.stderr ?? '').split('\n').find((line) => line.trim() !== '')?.trim();
      const why = fetched.error ? fetched.error.message : (firstLine ?? `the download ended with exit code ${fetched.status}`);
      return { reason: `the desktop runtime could not be fetched (${why}; offline?)` };
    }
    process.stderr.write(cached ? 'Crystallog: the desktop runtime is ready.\n' : 'Crystallog: the desktop runtime was fetched.\n');
  }
  return { executable };
}

/**
 * The runtime's zip in the download cache of the electron package's downloader (@electron/get: its
 * cache folder per platform, or electron_config_cache), if an earlier install left one there: then
 * the first launch only unpacks it and fetches nothing.
 */
function cachedRuntimeZip(dir) {
  let version;
  try {
    version = JSON.parse(readFileSync(join(dir, 'package.json'), 'utf8')).version;
  } catch {
    return null;
  }
  const home = homedir();
  const roots = process.env.electron_config_cache
    ? [process.env.electron_config_cache]
    : process.platform === 'darwin'
      ? [join(home, 'Library', 'Caches', 'electron')]
      : process.platform === 'win32'
        ? [join(process.env.LOCALAPPDATA ?? join(home, 'AppData', 'Local'), 'electron', 'Cache')]
        : [join(process.env.XDG_CACHE_HOME ?? join(home, '.cache'), 'electron')];
  const wanted = `electron-v${version}-${process.platform}-${process.env.ELECTRON_INSTALL_ARCH ?? process.arch}.zip`;
  for (const root of roots) {
    let folders = [];
    try {
      folders = readdirSync(root, { withFileTypes: true });
    } catch {
      continue;
    }
    if (folders.some((f) => f.isFile() && f.name === wanted)) return join(root, wanted);
    for (const f of folders) if (f.isDirectory() && existsSync(join(root, f.name, wanted))) return join(root, f.name, wanted);
  }
  return null;
}

/** The Electron executable the package recorded, if it is on disk. */
function installedExecutable(dir) {
  const pathFile = join(dir, 'path.txt');
  const relative = existsSync(pathFile) ? readFileSync(pathFile, 'utf8').trim() : '';
  const executable = relative ? join(dir, 'dist', relative) : '';
  return executable && existsSync(executable) ? executable : null;
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
  // The shell runs the app's engine with this Node.js, which built the native modules (see electron/main.ts).
  const child = spawn(runtime.executable, [root], { stdio: 'inherit', env: { ...process.env, CRYSTALLOG_NODE: process.execPath } });
  child.on('error', (err) => void browserMode(`the Electron runtime could not start (${err.message})`));
  child.on('exit', (code) => {
    // A crash within seconds of launch means this machine cannot run it: fall back rather than leave the user with nothing.
    // Exit code 3 is the shell's own word for it (its engine could not start; electron/main.ts).
    if (code === 3 || (code !== 0 && Date.now() - started < 5000)) void browserMode(`the desktop window could not run here (exit code ${code})`);
    else process.exitCode = code ?? 0;
  });
} else {
  void browserMode(runtime.reason);
}
