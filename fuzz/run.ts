/**
 * `npm run fuzz`: mutated pattern files through the readers and the analysis.
 *   node dist/fuzz/run.js [--count 10000] [--seed 16] [--cli 300] [--workers 2] [--timeout 20]
 * Part one runs every input in process on worker threads (readPatternBytes → analyzePattern, the path of
 * every command), a worker that takes longer than the timeout on one input counting as a hang. Part two
 * runs a sample through the real command line (peaks, match, size, analyze in turn). Prints the counts and
 * exits 1 on any crash, hang, changed input, unnamed refusal or broken CLI rule.
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { isMainThread, parentPort, Worker, workerData } from 'node:worker_threads';
import { classify, fuzzContext, type Outcome } from './classify.js';
import { CLI_COMMANDS, checkCli, crystallogBin, type CliCheck } from './cli-check.js';
import { inputAt, mutationNames, type SeedFile } from './inputs.js';
import { referenceFiles, seedFiles } from './seeds.js';

interface WorkerSetup {
  seeds: SeedFile[];
  references: Array<{ name: string; text: string }>;
  seed: number;
}

interface Answer {
  id: number;
  name: string;
  mutations: string[];
  outcome: Outcome;
  ms: number;
}

if (!isMainThread) {
  const setup = workerData as WorkerSetup;
  const context = fuzzContext(setup.references);
  parentPort!.on('message', (id: number) => {
    let input;
    try {
      input = inputAt(setup.seeds, setup.seed, id);
    } catch (err) {
      // A fault of the generator itself is reported, not hidden: the run fails on it like on a crash.
      const error = err instanceof Error ? err : new Error(String(err));
      const outcome: Outcome = { kind: 'crash', message: `fuzz input generator: ${error.message}`, stack: error.stack ?? '' };
      parentPort!.postMessage({ id, name: '(not made)', mutations: [], outcome, ms: 0 } satisfies Answer);
      return;
    }
    const started = performance.now();
    const outcome = classify(input.bytes, input.name, context);
    parentPort!.postMessage({ id, name: input.name, mutations: input.mutations, outcome, ms: performance.now() - started } satisfies Answer);
  });
} else {
  await main();
}

function option(name: string, fallback: number): number {
  const at = process.argv.indexOf(`--${name}`);
  if (at < 0) return fallback;
  const value = Number(process.argv[at + 1]);
  if (!Number.isFinite(value) || value < 0) throw new Error(`--${name} takes a number`);
  return value;
}

async function main(): Promise<void> {
  const count = option('count', 10_000);
  const seed = option('seed', 16);
  const cliCount = option('cli', 300);
  const workers = Math.max(1, option('workers', 2));
  const timeoutMs = option('timeout', 20) * 1000;
  const seeds = seedFiles();
  const references = referenceFiles();
  console.log(`fuzz: ${count} inputs from ${seeds.length} seed files, seed ${seed}, ${workers} workers, timeout ${timeoutMs / 1000} s`);
  console.log(`mutations: ${mutationNames().join(', ')}`);

  const started = Date.now();
  const answers = await inProcess({ seeds, references: references.map(({ name, text }) => ({ name, text })), seed }, count, workers, timeoutMs);
  const tally = new Map<string, number>();
  for (const a of answers) tally.set(a.outcome.kind, (tally.get(a.outcome.kind) ?? 0) + 1);
  const hangs = answers.filter((a) => a.outcome.kind === 'crash' && a.outcome.message.startsWith('hang:'));
  const crashes = answers.filter((a) => a.outcome.kind === 'crash' && !a.outcome.message.startsWith('hang:'));
  const bad = answers.filter((a) => a.outcome.kind !== 'ok' && a.outcome.kind !== 'refused');
  const withLine = answers.filter((a) => a.outcome.kind === 'refused' && a.outcome.line !== null).length;
  const slowest = answers.reduce((m, a) => (a.ms > m.ms ? a : m), answers[0]!);
  console.log(`in process: ${answers.length} inputs in ${((Date.now() - started) / 1000).toFixed(0)} s: ok ${tally.get('ok') ?? 0}, refused ${tally.get('refused') ?? 0} (${withLine} naming a line), ` +
    `unnamed refusals ${tally.get('unnamed') ?? 0}, invalid results ${tally.get('invalid') ?? 0}, crashes ${crashes.length}, hangs ${hangs.length}; slowest ${(slowest.ms / 1000).toFixed(1)} s (input ${slowest.id})`);
  for (const a of bad.slice(0, 40)) {
    const o = a.outcome as { message: string; stack?: string };
    console.log(`  input ${a.id} (${a.name}; ${a.mutations.join('; ')}): ${a.outcome.kind}: ${o.message.slice(0, 300)}`);
    if (o.stack) console.log(o.stack.split('\n').slice(1, 6).join('\n'));
  }

  const cli = cliCount > 0 ? await throughCli(seeds, seed, count, cliCount, timeoutMs, references.map((r) => r.path)) : [];
  const cliBad = cli.filter((c) => c.violations.length > 0);
  const exits = new Map<string, number>();
  for (const c of cli) exits.set(String(c.exitCode), (exits.get(String(c.exitCode)) ?? 0) + 1);
  console.log(`command line: ${cli.length} runs (${CLI_COMMANDS.join(', ')} in turn): exit codes ${[...exits].map(([k, v]) => `${k}: ${v}`).join(', ')}; ` +
    `hangs ${cli.filter((c) => c.hung).length}, changed inputs ${cli.filter((c) => c.changed).length}, runs breaking a rule ${cliBad.length}`);
  for (const c of cliBad.slice(0, 20)) console.log(`  ${c.command} ${c.file}: ${c.violations.join('; ')}\n    ${c.stderr.split('\n').slice(-3).join('\n    ')}`);

  const failed = bad.length + cliBad.length;
  console.log(failed === 0 ? 'fuzz: no crash, hang, changed input or broken rule' : `fuzz: ${failed} failures`);
  process.exitCode = failed === 0 ? 0 : 1;
}

/** Every input on a pool of worker threads, one at a time per worker; a worker stuck past the timeout is replaced. */
function inProcess(setup: WorkerSetup, count: number, workers: number, timeoutMs: number): Promise<Answer[]> {
  const answers: Answer[] = [];
  let next = 0;
  let done = 0;
  return new Promise((resolve) => {
    const start = (): void => {
      const worker = new Worker(new URL(import.meta.url), { workerData: setup });
      let current = -1;
      let timer: NodeJS.Timeout | null = null;
      const feed = (): void => {
        if (next >= count) {
          void worker.terminate();
          return;
        }
        current = next++;
        worker.postMessage(current);
        timer = setTimeout(() => {
          const input = inputAt(setup.seeds, setup.seed, current);
          answers.push({ id: current, name: input.name, mutations: input.mutations, outcome: { kind: 'crash', message: `hang: no answer within ${timeoutMs / 1000} s`, stack: '' }, ms: timeoutMs });
          void worker.terminate();
          finish();
          start();
        }, timeoutMs);
      };
      const finish = (): void => {
        done++;
        if (done % 1000 === 0) console.log(`  ${done} / ${count}`);
        if (done === count) resolve(answers.sort((a, b) => a.id - b.id));
      };
      worker.on('message', (answer: Answer) => {
        if (timer) clearTimeout(timer);
        answers.push(answer);
        finish();
        feed();
      });
      worker.on('error', (err) => {
        if (timer) clearTimeout(timer);
        answers.push({ id: current, name: '(see its id)', mutations: [], outcome: { kind: 'crash', message: `worker died: ${err.message}`, stack: err.stack ?? '' }, ms: 0 });
        finish();
        start();
      });
      feed();
    };
    for (let w = 0; w < Math.min(workers, count); w++) start();
  });
}

/** A sample of the inputs, spread over the run, through the real command (two at a time). */
async function throughCli(seeds: SeedFile[], seed: number, count: number, samples: number, timeoutMs: number, referencePaths: string[]): Promise<CliCheck[]> {
  const dir = mkdtempSync(join(tmpdir(), 'crystallog-fuzz-'));
  try {
    const library = join(dir, 'references.db');
    execFileSync(process.execPath, [crystallogBin(), 'library', 'import', ...referencePaths, '--library', library], { stdio: 'ignore' });
    const stride = Math.max(1, Math.floor(count / samples));
    const ids = Array.from({ length: Math.min(samples, count) }, (_, k) => k * stride);
    const results: CliCheck[] = [];
    let next = 0;
    const lane = async (): Promise<void> => {
      while (next < ids.length) {
        const k = next++;
        const input = inputAt(seeds, seed, ids[k]!);
        const file = join(dir, `${input.id}-${input.name}`);
        writeFileSync(file, input.bytes);
        results[k] = await checkCli(CLI_COMMANDS[k % CLI_COMMANDS.length]!, file, library, timeoutMs);
        rmSync(file, { force: true });
      }
    };
    await Promise.all([lane(), lane()]);
    return results;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
