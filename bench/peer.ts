/**
 * The whole job side by side with the numpy/scipy peer (bench/python/whole_job_scipy.py --mode job): the same
 * files, the peer over as many processes as our batch has workers, runs interleaved (ours, peer, ours, peer…)
 * so a drifting machine speed hits both alike, CPU (user + sys of the whole process tree) and wall time of
 * each, and an agreement check of the two sides' peaks, phases and sizes on the same files.
 */
import { spawnSync } from 'node:child_process';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { timeStats } from './types.js';

export interface TreeRun {
  wallMs: number;
  /** User + system CPU of the process and all its waited-for descendants (GNU time, from wait4's rusage). */
  cpuS: number;
  /** Largest RSS of any one process of the tree (wait4's ru_maxrss). */
  maxRssMb: number | null;
}

export interface PeerRound {
  ours: TreeRun;
  peer: TreeRun;
  /** The peer's own account: parent's RSS and the largest worker's (the tree holds parent + processes × worker at most). */
  peerSelfRssMb: number;
  peerWorkerRssMb: number;
}

export interface Agreement {
  files: number;
  /** Peaks found per side, and how many of ours the peer has within half a FWHM. */
  oursPeaks: number;
  peerPeaks: number;
  paired: number;
  /** Over clear peaks (ours ≥ 20 σ high, not overlapped) both found; how many agree within both tolerances. */
  clearPaired: number;
  clearWithin: number;
  maxTwoThetaDiffDeg: number;
  maxFwhmRelDiff: number;
  samePhaseSets: number;
  /** Files where both sized the same phase (sizes are compared on those only). */
  sameSizedPhase: number;
  maxScherrerRelDiff: number | null;
  maxWilliamsonHallRelDiff: number | null;
  tolerances: { twoThetaDeg: number; fwhmRel: number; scherrerRel: number; williamsonHallRel: number; clearPeakShare: number };
  pass: boolean;
}

/** Interpreters tried in turn for the scipy columns: $CRYSTALLOG_BENCH_PYTHON, the system one, then python3 on the PATH. */
const PYTHON_CANDIDATES = [process.env.CRYSTALLOG_BENCH_PYTHON, '/usr/bin/python3', 'python3'].filter((p): p is string => Boolean(p));

/** The first interpreter that imports numpy and scipy, or why there is none (nothing is installed). */
export function findPython(): { python: string } | { missing: string } {
  for (const candidate of PYTHON_CANDIDATES) {
    const check = spawnSync(candidate, ['-c', 'import numpy, scipy'], { encoding: 'utf8' });
    if (!check.error && check.status === 0) return { python: candidate };
  }
  return { missing: `no Python with numpy and scipy among ${PYTHON_CANDIDATES.join(', ')}; install them with: apt-get install python3-numpy python3-scipy (or set CRYSTALLOG_BENCH_PYTHON)` };
}

const TIME = '/usr/bin/time';
const TIME_FORMAT = 'bench_time user_s=%U sys_s=%S maxrss_kb=%M';

/** Run a command under GNU time; its stdout, and wall, CPU and RSS of its process tree. */
export function timedTree(command: string, args: string[]): { run: TreeRun; stdout: Buffer } {
  const start = performance.now();
  const child = spawnSync(TIME, ['-f', TIME_FORMAT, command, ...args], { stdio: ['ignore', 'pipe', 'pipe'], maxBuffer: 2 ** 31 - 1 });
  const wallMs = performance.now() - start;
  const stderr = child.stderr.toString();
  if (child.status !== 0) throw new Error(`${command} ${args[0] ?? ''} failed (exit ${child.status}): ${stderr.slice(-800)}`);
  const m = /bench_time user_s=([\d.]+) sys_s=([\d.]+) maxrss_kb=(\d+)/.exec(stderr);
  if (!m) throw new Error(`no GNU time figures in: ${stderr.slice(-300)}`);
  return { run: { wallMs, cpuS: Number(m[1]) + Number(m[2]), maxRssMb: Number(m[3]) / 1024 }, stdout: child.stdout };
}

export interface PeerSetup {
  python: string;
  script: string;
  cli: string;
  db: string;
  flatLibrary: string;
  files: string[];
  workers: number;
  rounds: number;
  dir: string;
  log: (line: string) => void;
}

/** Ours, peer, ours, peer… over `rounds` rounds on the same files; the last round's outputs are kept for the agreement check. */
export function interleavedRounds(setup: PeerSetup): { rounds: PeerRound[]; oursOut: string; peerOut: string } {
  const list = join(setup.dir, `peer-files-${setup.files.length}.txt`);
  writeFileSync(list, setup.files.join('\n') + '\n');
  const oursOut = join(setup.dir, 'peer-ours.json');
  const peerOut = join(setup.dir, 'peer-theirs.json');
  const rounds: PeerRound[] = [];
  for (let r = 0; r < setup.rounds; r++) {
    // Alternate which side goes first, so neither always runs on the warmer (or cooler) half of a round.
    const oursFirst = r % 2 === 0;
    let ours: TreeRun | null = null;
    let peer: { run: TreeRun; self: number; worker: number } | null = null;
    for (const side of oursFirst ? ['ours', 'peer'] : ['peer', 'ours']) {
      if (side === 'ours') {
        const t = timedTree(process.execPath, [setup.cli, 'analyze', '--files-from', list, '--library', setup.db, '--json']);
        writeFileSync(oursOut, t.stdout);
        ours = t.run;
      } else {
        const t = timedTree(setup.python, [setup.script, '--mode', 'job', '--files', list, '--library', setup.flatLibrary, '--processes', String(setup.workers), '--results', peerOut]);
        const own = JSON.parse(t.stdout.toString()) as { selfMaxRssMb: number; largestChildMaxRssMb: number };
        peer = { run: t.run, self: own.selfMaxRssMb, worker: own.largestChildMaxRssMb };
      }
    }
    rounds.push({ ours: ours!, peer: peer!.run, peerSelfRssMb: peer!.self, peerWorkerRssMb: peer!.worker });
    setup.log(`  round ${r + 1}/${setup.rounds}: ours ${ours!.cpuS.toFixed(1)} s CPU, ${(ours!.wallMs / 1000).toFixed(1)} s wall; peer ${peer!.run.cpuS.toFixed(1)} s CPU, ${(peer!.run.wallMs / 1000).toFixed(1)} s wall`);
  }
  return { rounds, oursOut, peerOut };
}

interface OursPeak {
  twoTheta: number;
  fwhm: number;
  height: number;
  heightSigma: number;
  overlapped: boolean;
}
interface OursFile {
  file: string;
  peaks: OursPeak[];
  match: { phases: Array<{ name: string; verdict: string }> };
  size: { scherrer: { sizeNm: number | null }; williamsonHall: { sizeNm: number | null } | null };
  settings: { sizePhase: string | null };
}
interface PeerFile {
  file: string;
  peaks: number[][];
  phases: string[];
  sizedPhase: string | null;
  size: { scherrerNm: number | null; williamsonHallNm: number | null };
}

/**
 * Position and width of a clear peak, Scherrer and Williamson–Hall sizes; and the share of clear peaks that must
 * meet both peak tolerances (where the two searches split a blend differently, one broad peak against two, a
 * peak's width differs by far more than any tolerance: those are counted, and the largest difference printed).
 */
const TOLERANCES = { twoThetaDeg: 0.01, fwhmRel: 0.05, scherrerRel: 0.05, williamsonHallRel: 0.2, clearPeakShare: 0.95 };
/** A peak at least this many σ of its height tall gives a position and width both sides must agree on. */
const CLEAR_SIGMAS = 20;

function relDiff(a: number | null | undefined, b: number | null | undefined): number | null {
  if (a === null || a === undefined || b === null || b === undefined || !(a > 0)) return null;
  return Math.abs(b - a) / a;
}

/** Both sides' peaks, phases and sizes on the same files, against stated tolerances. */
export function agreement(oursOut: string, peerOut: string): Agreement {
  const ours = (JSON.parse(readFileSync(oursOut, 'utf8')) as { files: OursFile[] }).files;
  const peer = new Map((JSON.parse(readFileSync(peerOut, 'utf8')) as PeerFile[]).map((f) => [f.file, f]));
  const a: Agreement = {
    files: 0, oursPeaks: 0, peerPeaks: 0, paired: 0, clearPaired: 0, clearWithin: 0, maxTwoThetaDiffDeg: 0, maxFwhmRelDiff: 0, samePhaseSets: 0, sameSizedPhase: 0,
    maxScherrerRelDiff: null, maxWilliamsonHallRelDiff: null, tolerances: TOLERANCES, pass: false,
  };
  const maxOf = (x: number | null, y: number | null): number | null => (y === null ? x : Math.max(x ?? 0, y));
  for (const o of ours) {
    const p = peer.get(o.file);
    if (!p || !o.peaks) continue;
    a.files++;
    a.oursPeaks += o.peaks.length;
    a.peerPeaks += p.peaks.length;
    const positions = p.peaks.map((q) => q[0]);
    for (const peak of o.peaks) {
      let best = -1;
      for (let j = 0; j < positions.length; j++) if (best < 0 || Math.abs(positions[j] - peak.twoTheta) < Math.abs(positions[best] - peak.twoTheta)) best = j;
      if (best < 0 || Math.abs(positions[best] - peak.twoTheta) > peak.fwhm / 2) continue;
      a.paired++;
      if (peak.overlapped || !(peak.height >= CLEAR_SIGMAS * peak.heightSigma)) continue;
      a.clearPaired++;
      const dtt = Math.abs(positions[best] - peak.twoTheta);
      const dw = Math.abs(p.peaks[best][2] - peak.fwhm) / peak.fwhm;
      a.maxTwoThetaDiffDeg = Math.max(a.maxTwoThetaDiffDeg, dtt);
      a.maxFwhmRelDiff = Math.max(a.maxFwhmRelDiff, dw);
      if (dtt <= TOLERANCES.twoThetaDeg && dw <= TOLERANCES.fwhmRel) a.clearWithin++;
    }
    const present = o.match.phases.filter((ph) => ph.verdict !== 'not-seen').map((ph) => ph.name).sort();
    if (present.join('\n') === [...p.phases].sort().join('\n')) a.samePhaseSets++;
    // Which present phase is sized is the match's choice (ours: the first in its ranking); sizes compare only when both chose the same.
    if (o.settings.sizePhase !== p.sizedPhase) continue;
    a.sameSizedPhase++;
    a.maxScherrerRelDiff = maxOf(a.maxScherrerRelDiff, relDiff(o.size.scherrer.sizeNm, p.size.scherrerNm));
    a.maxWilliamsonHallRelDiff = maxOf(a.maxWilliamsonHallRelDiff, relDiff(o.size.williamsonHall?.sizeNm, p.size.williamsonHallNm));
  }
  a.pass =
    a.files > 0 &&
    a.clearWithin >= TOLERANCES.clearPeakShare * a.clearPaired &&
    (a.maxScherrerRelDiff ?? 0) <= TOLERANCES.scherrerRel &&
    (a.maxWilliamsonHallRelDiff ?? 0) <= TOLERANCES.williamsonHallRel;
  return a;
}

/** What each side does that the other does not (kept beside the figures, so the ratio is read with it). */
export const ONLY_OURS: readonly string[] = [
  'low-angle unresolved Kα1/Kα2 doublets searched in the unstripped signal too',
  'noise measured from the data when intensities are not counts (the bench files are counts: unused here)',
  'cubic interpolation in the Kα2 stripping (the peer interpolates linearly)',
  'match: cell refinement within ±2 %, look-alike and solid-solution checks, chance-coincidence test, verdict rules, detection limits, semi-quantitative phase fractions, unexplained-peak accounting, amorphous share and crystallinity',
  'size: full line-to-peak blend rules (tails of neighbouring lines), breadth σ propagated with the FWHM–breadth correlation, Halder–Wagner size–strain, single-line Voigt sizes, instrument limits',
  'file checksums, reader notes, warnings and the per-file JSON report; library digest',
];
export const ONLY_PEER: readonly string[] = [
  'where the free Levenberg–Marquardt fit leaves the limits, the parameters past them are held at the limit and the rest refitted (active set, up to 3 more fits); ours keeps every step inside the box in one bounded LM',
  'each peak evaluated over its whole group region in the fit (ours within its reach, 5–25 FWHM, clipped to the region: the same points unless a group spans more than a peak\'s reach); the other peaks under a group over their reach, as ours',
  'phases screened without a shift, then only the 8 best refined (ours refines the shift inside the explanation of every candidate it weighs)',
];

export function summariseRounds(rounds: PeerRound[]): Record<string, number> {
  const med = (f: (r: PeerRound) => number) => timeStats(rounds.map(f)).medianMs;
  // Ratio per round (each pair ran back to back), then the median of the ratios.
  return {
    oursCpuS: med((r) => r.ours.cpuS),
    peerCpuS: med((r) => r.peer.cpuS),
    oursWallMs: med((r) => r.ours.wallMs),
    peerWallMs: med((r) => r.peer.wallMs),
    cpuRatio: med((r) => r.peer.cpuS / r.ours.cpuS),
    wallRatio: med((r) => r.peer.wallMs / r.ours.wallMs),
    oursRssMb: Math.max(...rounds.map((r) => r.ours.maxRssMb ?? 0)),
    peerLargestProcessRssMb: Math.max(...rounds.map((r) => r.peer.maxRssMb ?? 0)),
    peerSelfRssMb: Math.max(...rounds.map((r) => r.peerSelfRssMb)),
    peerWorkerRssMb: Math.max(...rounds.map((r) => r.peerWorkerRssMb)),
  };
}
