/**
 * Runs one area's bench module in a process of its own (`node dist/bench/area-runner.js AREA`), so
 * that the heap left by one step (a million-point file, a 100 000-reference library) does not slow
 * the next. Prints the module's rows as JSON on the last line of stdout.
 */
import type { BenchRow } from './types.js';

const area = process.argv[2] ?? '';
if (!/^[a-z]+$/.test(area)) {
  process.stderr.write(`area-runner: "${area}" is not an area name\n`);
  process.exit(2);
}
const module = (await import(`./${area}.js`)) as { run?: () => Promise<BenchRow[]> };
const rows = typeof module.run === 'function' ? await module.run() : [];
process.stdout.write(`\n${JSON.stringify(rows)}\n`);
