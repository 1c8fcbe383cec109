import { existsSync } from 'node:fs';
import { sep } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

/**
 * A worker module beside the module at `moduleUrl` (`name` without extension); when running from the
 * TypeScript sources (tests), the compiled one in dist/, since a worker thread loads JavaScript.
 */
export function workerScriptBeside(moduleUrl: string, name: string): URL {
  const here = new URL(`./${name}.js`, moduleUrl);
  if (existsSync(fileURLToPath(here))) return here;
  const source = fileURLToPath(here);
  const at = Math.max(source.lastIndexOf(`${sep}src${sep}`), source.lastIndexOf('/src/'));
  return pathToFileURL(`${source.slice(0, at)}${sep}dist${source.slice(at)}`);
}
