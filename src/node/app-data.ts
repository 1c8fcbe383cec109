import { existsSync, mkdirSync, readFileSync, renameSync, writeFileSync } from 'node:fs';
import { homedir } from 'node:os';
import { join } from 'node:path';
import type { PaperSize } from '../core/report/report.js';

/**
 * Where the user's data lives: the reference library (one SQLite file) and the projects (one SQLite
 * file each). CRYSTALLOG_DATA_DIR overrides the platform's usual place (tests, portable installs).
 */
export interface AppDataPaths {
  root: string;
  libraryFile: string;
  projectsDir: string;
}

export function defaultAppDataRoot(env: NodeJS.ProcessEnv = process.env, platform: NodeJS.Platform = process.platform): string {
  if (env.CRYSTALLOG_DATA_DIR) return env.CRYSTALLOG_DATA_DIR;
  if (platform === 'win32') return join(env.APPDATA ?? join(homedir(), 'AppData', 'Roaming'), 'Crystallog');
  if (platform === 'darwin') return join(homedir(), 'Library', 'Application Support', 'Crystallog');
  return join(env.XDG_DATA_HOME ?? join(homedir(), '.local', 'share'), 'crystallog');
}

/** The folder layout under root, created when missing. */
export function appDataPaths(root: string): AppDataPaths {
  const projectsDir = join(root, 'projects');
  mkdirSync(projectsDir, { recursive: true });
  return { root, libraryFile: join(root, 'library.sqlite'), projectsDir };
}

/** The app's own settings (not a project's): kept in preferences.json in the app-data folder. */
export interface AppPreferences {
  /** Paper size of printed and PDF reports. */
  paper: PaperSize;
}

export const DEFAULT_PREFERENCES: AppPreferences = { paper: 'A4' };

/** The stored preferences, with the defaults for anything missing or unreadable. */
export function readPreferences(paths: AppDataPaths): AppPreferences {
  const file = join(paths.root, 'preferences.json');
  if (!existsSync(file)) return { ...DEFAULT_PREFERENCES };
  try {
    const stored = JSON.parse(readFileSync(file, 'utf8')) as Partial<AppPreferences>;
    return { paper: stored.paper === 'Letter' ? 'Letter' : 'A4' };
  } catch {
    return { ...DEFAULT_PREFERENCES };
  }
}

/** Write the preferences whole (to a temporary file first, so a crash never leaves half a file). */
export function writePreferences(paths: AppDataPaths, preferences: AppPreferences): AppPreferences {
  const file = join(paths.root, 'preferences.json');
  writeFileSync(`${file}.tmp`, `${JSON.stringify(preferences, null, 2)}\n`);
  renameSync(`${file}.tmp`, file);
  return preferences;
}
