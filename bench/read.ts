/**
 * Reading speed: simulated patterns of 100 000 and 1 000 000 points written as two-column text
 * (and as semicolon CSV with decimal commas, and as powder CIF) into the system temp folder, then
 * read back. "file" rows include reading the bytes from disk and the SHA-256; "parse" rows start
 * from bytes in memory.
 */
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { patternToXyText, simulatePattern } from '../src/core/crystal/simulate.js';
import type { Pattern } from '../src/core/model/pattern.js';
import { readPatternBytes } from '../src/core/pattern/read.js';
import { readPatternFile } from '../src/node/files.js';
import { anodeWavelength } from '../src/core/model/wavelengths.js';
import { timeStats, type BenchRow } from './types.js';

/** Silicon-like d-spacings (Å) with rough relative intensities, only to put peaks into the simulated scan. */
const LINES = [
  { d: 3.1356, intensity: 100 },
  { d: 1.9201, intensity: 55 },
  { d: 1.6375, intensity: 30 },
  { d: 1.3577, intensity: 6 },
  { d: 1.2459, intensity: 11 },
];

/** 5–105° 2θ in `points` steps (0.001° for 100 000 points, 0.0001° for 1 000 000: the xy text keeps 4 decimals). */
function simulated(points: number): Pattern {
  const min = 5;
  const stepDeg = 100 / points;
  return simulatePattern({
    phases: [{ lines: LINES, scale: 1 }],
    wavelength: anodeWavelength('Cu'),
    twoThetaMinDeg: min,
    twoThetaMaxDeg: min + stepDeg * (points - 0.5),
    stepDeg,
    peakCounts: 20000,
    noiseSeed: 42,
    name: `simulated ${points} points`,
  });
}

function toCsv(p: Pattern): string {
  const out = ['# simulated by Crystallog for the reading benchmark', '2Theta;Counts'];
  for (let i = 0; i < p.x.length; i++) out.push(`${p.x[i].toFixed(5).replace('.', ',')};${p.y[i]}`);
  return out.join('\n') + '\n';
}

function toPowderCif(p: Pattern): string {
  const out = ['# simulated by Crystallog for the reading benchmark', 'data_simulated', '_diffrn_radiation_wavelength 1.540593', 'loop_', '_pd_meas_2theta_scan', '_pd_meas_counts_total'];
  for (let i = 0; i < p.x.length; i++) out.push(`${p.x[i].toFixed(5)} ${p.y[i]}(${Math.round(Math.sqrt(Math.max(p.y[i], 1)))})`);
  return out.join('\n') + '\n';
}

function measure(name: string, repeats: number, work: () => number, target?: string, note?: string): BenchRow {
  const times: number[] = [];
  const cpuTimes: number[] = [];
  let points = 0;
  work(); // warm-up
  for (let r = 0; r < repeats; r++) {
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    points = work();
    times.push(performance.now() - t0);
    const cpu = process.cpuUsage(cpu0);
    cpuTimes.push((cpu.user + cpu.system) / 1000);
  }
  const cpuMedian = timeStats(cpuTimes).medianMs;
  const row: BenchRow = {
    name,
    ...timeStats(times),
    note: `${points} points; CPU time median ${cpuMedian.toFixed(1)} ms (wall time suffers when other processes share the cores)${note ? `; ${note}` : ''}`,
  };
  if (target) row.target = target;
  return row;
}

export async function run(): Promise<BenchRow[]> {
  const dir = join(tmpdir(), 'crystallog-bench-read');
  mkdirSync(dir, { recursive: true });
  const rows: BenchRow[] = [];
  for (const points of [100_000, 1_000_000]) {
    const pattern = simulated(points);
    const xyPath = join(dir, `simulated-${points}.xy`);
    writeFileSync(xyPath, patternToXyText(pattern, ['simulated by Crystallog for the reading benchmark', 'Anode: Cu']));
    const bytes = readFileSync(xyPath);
    const target = points === 100_000 ? '< 50 ms' : '< 500 ms';
    const repeats = points === 100_000 ? 15 : 5;
    rows.push(measure(`read xy file, ${points} points`, repeats, () => readPatternFile(xyPath).x.length, target, 'disk read + SHA-256 + parse'));
    rows.push(measure(`parse xy bytes, ${points} points`, repeats, () => readPatternBytes(bytes, xyPath).x.length, target));
    if (points === 100_000) {
      const csv = new TextEncoder().encode(toCsv(pattern));
      rows.push(measure(`parse semicolon CSV (decimal comma), ${points} points`, repeats, () => readPatternBytes(csv, 'bench.csv').x.length));
      const cif = new TextEncoder().encode(toPowderCif(pattern));
      rows.push(measure(`parse powder CIF with esd, ${points} points`, 5, () => readPatternBytes(cif, 'bench.cif').x.length));
    }
  }
  return rows;
}
