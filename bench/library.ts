/**
 * Reference library speed: importing 10 000 references of 30 lines, listing/searching by name and
 * tag, and loading every reference (10 000 and 100 000) for matching. Synthetic references
 * (seeded, labelled simulated) in a temporary folder.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { seededUniform } from '../src/core/numeric/random.js';
import { formatReferenceJson, parseReferenceJson } from '../src/core/library/json-format.js';
import type { Reference } from '../src/core/model/reference.js';
import { ReferenceLibrary } from '../src/node/library/store.js';
import { timeStats, type BenchRow } from './types.js';

const LINES_PER_REFERENCE = 30;
/** Every this-many-th reference is tagged "target", so a tag query returns a few dozen of 10 000. */
const TARGET_EVERY = 250;

function simulatedReferences(count: number, seed: number): Reference[] {
  const uniform = seededUniform(seed);
  const refs: Reference[] = [];
  for (let i = 0; i < count; i++) {
    const lines = Array.from({ length: LINES_PER_REFERENCE }, () => ({
      d: Math.round((0.9 + 14 * uniform() ** 2) * 1e5) / 1e5,
      intensity: Math.round(1000 * uniform()) / 10,
    }));
    lines[0]!.intensity = 100;
    refs.push({
      name: `simulated phase ${String(i).padStart(6, '0')}`,
      formula: `X${i % 97}`,
      tags: i % TARGET_EVERY === 0 ? ['target', 'simulated'] : ['simulated'],
      source: `simulated for the library benchmark (seed ${seed})`,
      lines,
    });
  }
  return refs;
}

/** Wall-clock times of repeated runs, with the median CPU time in the note (the machine may be shared). */
async function timed(name: string, runs: number, work: (run: number) => unknown, extra: Partial<BenchRow> = {}): Promise<BenchRow> {
  const times: number[] = [];
  const cpu: number[] = [];
  for (let run = 0; run < runs; run++) {
    const cpuStart = process.cpuUsage();
    const start = performance.now();
    work(run);
    times.push(performance.now() - start);
    const used = process.cpuUsage(cpuStart);
    cpu.push((used.user + used.system) / 1000);
    await new Promise((resolve) => setImmediate(resolve));
  }
  const note = [`CPU ${timeStats(cpu).medianMs.toFixed(1)} ms`, extra.note].filter(Boolean).join('; ');
  return { name, ...timeStats(times), ...extra, note };
}

/** Load every reference through a new connection (nothing cached), optionally decoding every line. */
function loadAll(path: string, touchLines: boolean): number {
  const lib = ReferenceLibrary.open(path);
  let lines = 0;
  for (const ref of lib.all()) if (touchLines) lines += ref.lines.length;
  lib.close();
  return lines;
}

export async function run(): Promise<BenchRow[]> {
  const dir = mkdtempSync(join(tmpdir(), 'crystallog-bench-library-'));
  const rows: BenchRow[] = [];
  try {
    const tenThousand = simulatedReferences(10_000, 31);
    const jsonText = formatReferenceJson(tenThousand);
    rows.push(
      await timed(
        'library: import 10 000 references × 30 lines from JSON (parse, check, store)',
        3,
        (i) => {
          const lib = ReferenceLibrary.open(join(dir, `import-${i}.sqlite`));
          lib.importReferences(parseReferenceJson(jsonText, 'bench.json'));
          lib.close();
        },
        { target: '< 10 000 ms', note: `${(jsonText.length / 1e6).toFixed(1)} MB of JSON` },
      ),
    );
    rows.push(
      await timed('library: re-import the same 10 000 references (all unchanged)', 3, () => {
        const lib = ReferenceLibrary.open(join(dir, 'import-0.sqlite'));
        lib.importReferences(tenThousand);
        lib.close();
      }),
    );

    const lib = ReferenceLibrary.open(join(dir, 'import-0.sqlite'));
    rows.push(await timed('library: search by name in 10 000 (a handful of hits)', 21, () => lib.list({ search: 'phase 00012' }), { target: '< 20 ms' }));
    rows.push(
      await timed('library: list by tag in 10 000 (40 hits)', 21, () => lib.list({ tag: 'target' }), {
        target: '< 20 ms',
      }),
    );
    rows.push(await timed('library: all() of 10 000 references, first load, lines decoded', 5, () => loadAll(join(dir, 'import-0.sqlite'), true)));
    lib.all();
    rows.push(await timed('library: all() of 10 000 references again (unchanged library, kept in memory)', 11, () => lib.all()));
    lib.close();

    const large = ReferenceLibrary.open(join(dir, 'large.sqlite'));
    const start = performance.now();
    for (let part = 0; part < 10; part++) {
      const refs = simulatedReferences(10_000, 1000 + part).map((r) => ({ ...r, name: `${r.name} part ${part}` }));
      large.importReferences(refs);
    }
    const buildMs = performance.now() - start;
    const largePath = join(dir, 'large.sqlite');
    rows.push(
      await timed('library: all() of 100 000 references × 30 lines, first load', 3, () => loadAll(largePath, false), {
        note: `building the 100 000 library took ${Math.round(buildMs)} ms`,
      }),
    );
    rows.push(await timed('library: all() of 100 000 references × 30 lines, first load, every line decoded', 3, () => loadAll(largePath, true)));
    rows.push(await timed('library: search by name in 100 000 (a handful of hits)', 11, () => large.list({ search: 'phase 000123 part 3' }), { target: '< 20 ms' }));
    rows.push(await timed('library: list by tag in 100 000 (400 hits)', 11, () => large.list({ tag: 'target' })));
    large.close();
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
  return rows;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  for (const row of await run()) {
    console.log(`${row.name}: median ${row.medianMs.toFixed(1)} ms (min ${row.minMs.toFixed(1)}, max ${row.maxMs.toFixed(1)})${row.target ? `, target ${row.target}` : ''}${row.note ? `; ${row.note}` : ''}`);
  }
}
