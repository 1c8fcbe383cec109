/**
 * Accuracy cases for the matcher, built on the project's own pipeline: references computed from the
 * fixture CIFs (crystal module), patterns simulated from them (simulatePattern, labelled simulated),
 * peaks found by findPeaks, phases judged by matchPhases. The truth of every case is known.
 *
 * Mixtures: the simulator's scale of phase i is w_i · RIR_i (times its 0–100 reference intensities),
 * which is what Chung's matrix flushing assumes (I_i ∝ w_i · RIR_i; Chung, J. Appl. Cryst. 7, 519
 * (1974)), so simulated weight fractions and the matcher's fractions are on the same footing.
 */
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { cellMetric } from '../../src/core/crystal/metric.js';
import { equivalentReflections } from '../../src/core/crystal/reflections.js';
import { readCifStructure, type CrystalStructure } from '../../src/core/crystal/structure.js';
import { referenceFromStructure } from '../../src/core/crystal/powder.js';
import { seededUniform } from '../../src/core/numeric/random.js';
import { simulatePattern } from '../../src/core/crystal/simulate.js';
import type { ReferenceLine, StoredReference } from '../../src/core/model/reference.js';
import { matchPhases } from '../../src/core/match/match.js';
import type { MatchResult } from '../../src/core/match/types.js';
import { DEG_TO_RAD, twoThetaFromD } from '../../src/core/model/units.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { findPeaks } from '../../src/core/process/peaks.js';

export const CU = anodeWavelength('Cu');
const FIXTURE_DIR = join(dirname(fileURLToPath(import.meta.url)), '..', 'fixtures', 'cif');

/**
 * Reference intensity ratios used as simulation parameters (typical I/I_corundum values, from memory;
 * corundum is 1 by definition, Chung 1974). The suite needs only that the simulator and the matcher
 * use the same values.
 */
const RIR: Record<string, number> = { anatase: 4.9, calcite: 3.2, ceo2: 13.0, corundum: 1.0, nacl: 4.4, rutile: 3.4, si: 4.7, zno: 5.4 };
export const PHASE_NAMES = Object.keys(RIR);

/** A heavier or lighter neighbour for each cation, to make a look-alike with other intensities. */
const SUBSTITUTE: Record<string, string> = { Ti: 'V', Ca: 'Sr', Ce: 'Th', Al: 'Ga', Na: 'K', Si: 'Ge', Zn: 'Cd' };

let id = 1;
function asStored(ref: Omit<StoredReference, 'id' | 'version' | 'createdAt'>): StoredReference {
  return { ...ref, id: id++, version: 1, createdAt: '2000-01-01T00:00:00.000Z' };
}

export interface Phase {
  reference: StoredReference;
  structure: CrystalStructure;
}

export function loadStructure(name: string): CrystalStructure {
  const file = join(FIXTURE_DIR, `${name}.cif`);
  return readCifStructure(readFileSync(file, 'utf8'), file);
}

export function phaseFromStructure(name: string, structure: CrystalStructure, tags: string[] = []): Phase {
  const computed = referenceFromStructure(structure, { wavelength: CU });
  return { structure, reference: asStored({ ...computed, name, tags, rir: RIR[name] ?? null }) };
}

/** The eight fixture phases, references computed for Cu Kα1. */
export function fixturePhases(): Phase[] {
  return PHASE_NAMES.map((name) => phaseFromStructure(name, loadStructure(name)));
}

/** Same structure type, cell scaled by `factor` (1.002: 0.2 % apart), cations substituted. */
export function lookAlike(phase: Phase, factor: number): Phase {
  const s = phase.structure;
  const cell = { ...s.cell, a: s.cell.a * factor, b: s.cell.b * factor, c: s.cell.c * factor };
  const sites = s.sites.map((site) => {
    const element = SUBSTITUTE[site.element];
    return element ? { ...site, element, typeSymbol: element } : site;
  });
  const name = `${phase.reference.name}-look-alike`;
  const structure: CrystalStructure = { ...s, name, cell, sites };
  const computed = referenceFromStructure(structure, { wavelength: CU });
  return { structure, reference: asStored({ ...computed, name, tags: [], rir: null }) };
}

/** March–Dollase weight of a line, averaged over its equivalent reflections (Dollase, J. Appl. Cryst. 19, 267 (1986)). */
function marchDollase(structure: CrystalStructure, r: number, axis: [number, number, number]): (line: ReferenceLine) => number {
  const { gStar } = cellMetric(structure.cell);
  const group = structure.spaceGroup;
  const dot = (u: number[], v: number[]): number => {
    let s = 0;
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) s += u[i] * gStar[3 * i + j] * v[j];
    return s;
  };
  return (line) => {
    if (!line.hkl) return 1;
    const equivalents = equivalentReflections(group, line.hkl);
    let sum = 0;
    for (const h of equivalents) {
      const cos = dot(h, axis) / Math.sqrt(dot(h, h) * dot(axis, axis));
      const sin2 = Math.max(0, 1 - cos * cos);
      sum += Math.pow(r * r * cos * cos + sin2 / r, -1.5);
    }
    return sum / equivalents.length;
  };
}

export interface CasePhase {
  phase: Phase;
  weightFraction: number;
  sizeNm: number;
  /** March–Dollase r (1: random orientation) about the c* axis. */
  marchDollaseR: number;
}

export interface SimulatedCase {
  phases: CasePhase[];
  zeroDeg: number;
  displacementCosDeg: number;
  peakCounts: number;
  seed: number;
}

/** Simulate the pattern of a case (10–90° 2θ in 0.02° steps, Cu Kα1/Kα2, Poisson noise), find its peaks, match. */
export function runCase(c: SimulatedCase, library: StoredReference[], target?: string): MatchResult {
  const pattern = simulatePattern({
    phases: c.phases.map((p) => ({
      lines: p.phase.reference.lines,
      scale: p.weightFraction * (p.phase.reference.rir ?? 1),
      sizeNm: p.sizeNm,
      ...(p.marchDollaseR !== 1 ? { lineWeight: marchDollase(p.phase.structure, p.marchDollaseR, [0, 0, 1]) } : {}),
    })),
    wavelength: CU,
    twoThetaMinDeg: 10,
    twoThetaMaxDeg: 90,
    stepDeg: 0.02,
    zeroShiftDeg: c.zeroDeg,
    displacementCosDeg: c.displacementCosDeg,
    peakCounts: c.peakCounts,
    noiseSeed: c.seed,
    name: `accuracy case ${c.seed} (simulated)`,
  });
  const search = findPeaks(pattern, { wavelength: CU });
  return matchPhases(search.peaks, library, {
    wavelength: CU,
    background: { x: pattern.x, y: search.background, sigma: search.noiseSigma },
    twoThetaRangeDeg: { min: 10, max: 90 },
    ...(target ? { target } : {}),
  });
}

/** Seeded draws for the case generator. */
export function caseRandom(seed: number): {
  uniform: () => number;
  pick: <T>(items: readonly T[]) => T;
  sizeNm: () => number;
  shift: () => { zeroDeg: number; displacementCosDeg: number };
  orientation: () => number;
  counts: () => number;
} {
  const uniform = seededUniform(seed);
  const pick = <T>(items: readonly T[]): T => items[Math.floor(uniform() * items.length)];
  return {
    uniform,
    pick,
    // 10–200 nm, log-uniform.
    sizeNm: () => Math.round(10 * Math.pow(20, uniform())),
    // Zero offsets up to ±0.1°, displacement up to ±0.08°·cosθ.
    shift: () => ({ zeroDeg: 0.2 * (uniform() - 0.5), displacementCosDeg: 0.16 * (uniform() - 0.5) }),
    // Half the phases randomly oriented, the rest March–Dollase r from 0.7 (plates) to 1.3 (needles).
    orientation: () => (uniform() < 0.5 ? 1 : pick([0.7, 0.8, 0.9, 1.15, 1.3])),
    counts: () => pick([2000, 20000]),
  };
}

export function rate(hits: number, total: number): string {
  return `${hits}/${total} = ${total > 0 ? ((100 * hits) / total).toFixed(1) : '—'} %`;
}

/** Approximate integral breadth of a simulated line: instrument (about 0.07°) plus Scherrer size broadening (K = 0.9), degrees. */
function approximateBreadthDeg(twoThetaDeg: number, sizeNm: number): number {
  const cos = Math.cos((twoThetaDeg / 2) * DEG_TO_RAD);
  return 0.07 + (0.9 * CU.lambda1) / (sizeNm * 10 * cos) / DEG_TO_RAD;
}

/**
 * Whether a phase of a case could be identified at all, judged from the simulation truth: at least two
 * of its lines that no line of the other phases at least half as tall overlaps (closer than 0.2° or
 * 1.5 mean breadths) must be expected at least `noiseLevels` √background high (heights from area over an
 * approximate breadth, scaled like the simulator: tallest line = peakCounts).
 */
export function detectable(c: SimulatedCase, which: number, noiseLevels = 6): boolean {
  const lines = c.phases.map((p) =>
    p.phase.reference.lines
      .map((l) => {
        const tt = twoThetaFromD(l.d, CU.lambda1);
        const area = p.weightFraction * (p.phase.reference.rir ?? 1) * (l.intensity ?? 10);
        const breadth = Number.isFinite(tt) ? approximateBreadthDeg(tt, p.sizeNm) : 1;
        return { tt, breadth, height: Number.isFinite(tt) ? area / breadth : 0 };
      })
      .filter((l) => l.tt >= 10 && l.tt <= 90),
  );
  let tallest = 0;
  for (const phaseLines of lines) for (const l of phaseLines) tallest = Math.max(tallest, l.height);
  const others = lines.filter((_, k) => k !== which).flat();
  let clearLines = 0;
  for (const l of lines[which]) {
    const hidden = others.some((o) => o.height >= 0.5 * l.height && Math.abs(o.tt - l.tt) < Math.max(0.2, 0.75 * (o.breadth + l.breadth)));
    if (hidden) continue;
    const counts = (c.peakCounts * l.height) / tallest;
    const background = 60 + 240 * Math.exp(-l.tt / 8); // the simulator's default background
    if (counts >= noiseLevels * Math.sqrt(background)) clearLines++;
  }
  // One line cannot identify a phase: at least two must stand clear.
  return clearLines >= 2;
}
