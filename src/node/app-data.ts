import { mkdirSync } from 'node:fs';
import { homedir } from 'node:os';
import { join } from 'node:path';

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
