/**
 * Shared pieces of the accuracy suites on the independent simulator (test/simulator): library
 * references built from the simulator's own line lists (its own metric, not the app's reference
 * builder), a few test phases of every crystal system, and the per-case random draws.
 */
import type { Reference, StoredReference } from '../../src/core/model/reference.js';
import { seededUniform } from '../../src/core/numeric/random.js';
import { dSpacing, reflectionList, type SimulatedCell, type SimulatedReflection } from '../simulator/cell.js';
import { CU_KALPHA1, CU_KALPHA2, hklOfClass, KALPHA2_RATIO, type BeamLine, type CellPhase } from '../simulator/pattern.js';

/** A library reference with the simulator's lines of a cell (d by the simulator's metric, intensities 0–100). */
export function storedReference(id: number, name: string, cell: SimulatedCell, spaceGroup: string, reflections: readonly SimulatedReflection[], rir = 3): StoredReference {
  const lines = reflections
    .map((r) => ({ d: dSpacing(cell, r.hkl), intensity: Math.round(r.intensity * 100) / 100, hkl: [...r.hkl] as [number, number, number] }))
    .filter((l) => l.intensity >= 0.5)
    .sort((p, q) => q.d - p.d);
  return { id, version: 1, createdAt: '2026-01-01T00:00:00Z', name, formula: name, tags: [], source: 'accuracy-test simulator', rir, lines, cell: { ...cell, spaceGroup } };
}

export interface TestPhase {
  name: string;
  system: 'cubic' | 'tetragonal' | 'hexagonal' | 'orthorhombic' | 'monoclinic';
  spaceGroup: string;
  cell: SimulatedCell;
}

/** One phase of each crystal system (cells of silicon, rutile, ZnO, an orthorhombic and a monoclinic oxide; edges rounded). */
export const TEST_PHASES: readonly TestPhase[] = [
  { name: 'cubic test phase', system: 'cubic', spaceGroup: 'P m -3 m', cell: { a: 5.431, b: 5.431, c: 5.431, alpha: 90, beta: 90, gamma: 90 } },
  { name: 'tetragonal test phase', system: 'tetragonal', spaceGroup: 'P 4/m m m', cell: { a: 4.5937, b: 4.5937, c: 2.9587, alpha: 90, beta: 90, gamma: 90 } },
  { name: 'hexagonal test phase', system: 'hexagonal', spaceGroup: 'P 6/m m m', cell: { a: 3.2498, b: 3.2498, c: 5.2066, alpha: 90, beta: 90, gamma: 120 } },
  { name: 'orthorhombic test phase', system: 'orthorhombic', spaceGroup: 'P m m m', cell: { a: 4.76, b: 5.58, c: 6.43, alpha: 90, beta: 90, gamma: 90 } },
  { name: 'monoclinic test phase', system: 'monoclinic', spaceGroup: 'P 1 2/m 1', cell: { a: 6.21, b: 4.37, c: 5.83, alpha: 90, beta: 101.9, gamma: 90 } },
];

/** The lattice parameters each system leaves free (International Tables Vol. A, Table 2.1.2.1). */
export const FREE_PARAMETERS: Record<TestPhase['system'], Array<'a' | 'b' | 'c' | 'beta'>> = {
  cubic: ['a'],
  tetragonal: ['a', 'c'],
  hexagonal: ['a', 'c'],
  orthorhombic: ['a', 'b', 'c'],
  monoclinic: ['a', 'b', 'c', 'beta'],
};

/** A cell changed within its symmetry: each free edge by its own fraction, β by degrees. */
export function changedCell(phase: TestPhase, edgeFractions: readonly number[], betaDeg = 0): SimulatedCell {
  const c = phase.cell;
  const [fa = 0, fb = fa, fc = fb] = phase.system === 'cubic' ? [edgeFractions[0]!, edgeFractions[0]!, edgeFractions[0]!] : phase.system === 'orthorhombic' || phase.system === 'monoclinic' ? edgeFractions : [edgeFractions[0]!, edgeFractions[0]!, edgeFractions[1]!];
  return { ...c, a: c.a * (1 + fa), b: c.b * (1 + fb), c: c.c * (1 + fc), beta: c.beta + (phase.system === 'monoclinic' ? betaDeg : 0) };
}

export interface Radiation {
  label: string;
  /** What the analysis is told (an anode or a number in Å). */
  wavelength: string;
  beam: readonly BeamLine[];
  twoThetaMinDeg: number;
  twoThetaMaxDeg: number;
  stepDeg: number;
  /** The instrument's widths at this radiation (a synchrotron's are much narrower). */
  instrument: { u: number; v: number; w: number; x: number; y: number };
}

const LAB = { u: 0.004, v: -0.002, w: 0.0018, x: 0.018, y: 0.012 };
/** Mo Kα1/Kα2, Å (International Tables Vol. C, Table 4.2.2.1; from memory, as in CHECK-VALUES.md). */
const MO_KALPHA1 = 0.709317;
const MO_KALPHA2 = 0.713607;

export const RADIATIONS: readonly Radiation[] = [
  { label: 'Cu Kα1+Kα2', wavelength: 'Cu', beam: [{ lambda: CU_KALPHA1, weight: 1 }, { lambda: CU_KALPHA2, weight: KALPHA2_RATIO }], twoThetaMinDeg: 10, twoThetaMaxDeg: 120, stepDeg: 0.02, instrument: LAB },
  { label: 'Mo Kα1+Kα2', wavelength: 'Mo', beam: [{ lambda: MO_KALPHA1, weight: 1 }, { lambda: MO_KALPHA2, weight: KALPHA2_RATIO }], twoThetaMinDeg: 5, twoThetaMaxDeg: 55, stepDeg: 0.01, instrument: { u: 0.002, v: -0.001, w: 0.0012, x: 0.01, y: 0.008 } },
  { label: 'synchrotron 0.7 Å', wavelength: '0.7', beam: [{ lambda: 0.7, weight: 1 }], twoThetaMinDeg: 5, twoThetaMaxDeg: 55, stepDeg: 0.005, instrument: { u: 0, v: 0, w: 0.0006, x: 0, y: 0.006 } },
  { label: 'synchrotron 0.4 Å', wavelength: '0.4', beam: [{ lambda: 0.4, weight: 1 }], twoThetaMinDeg: 3, twoThetaMaxDeg: 32, stepDeg: 0.005, instrument: { u: 0, v: 0, w: 0.0004, x: 0, y: 0.004 } },
];

/** The simulator settings a radiation fixes: its scan range and step, its beam lines and its instrument widths. */
export function scanOf(r: Radiation): Pick<Radiation, 'twoThetaMinDeg' | 'twoThetaMaxDeg' | 'stepDeg' | 'beam' | 'instrument'> {
  return { twoThetaMinDeg: r.twoThetaMinDeg, twoThetaMaxDeg: r.twoThetaMaxDeg, stepDeg: r.stepDeg, beam: r.beam, instrument: r.instrument };
}

/** Shortest d a radiation's scan reaches, Å. */
export function dMinOf(r: Radiation): number {
  const lambda = Math.min(...r.beam.map((b) => b.lambda));
  return lambda / (2 * Math.sin(((r.twoThetaMaxDeg + 2) * Math.PI) / 360));
}

/** The seeded draws of one case. */
export function caseDraws(seed: number) {
  const u = seededUniform(seed);
  return {
    uniform: u,
    between: (lo: number, hi: number) => lo + (hi - lo) * u(),
    sign: () => (u() < 0.5 ? -1 : 1),
  };
}

/** A phase of the simulator from a test phase's reflections at a given cell. */
export function simulatedPhase(cell: SimulatedCell, reflections: readonly SimulatedReflection[], sizeNm: number, scale = 1): CellPhase {
  return { cell, reflections, sizeNm, scale };
}

/** The reflections of a test phase (seeded per phase, so the reference and every pattern agree). */
export function reflectionsOf(phase: TestPhase, dMin: number, seed: number): SimulatedReflection[] {
  return reflectionList(phase.cell, dMin, seededUniform(seed));
}

export const rate = (k: number, n: number): string => `${k}/${n} = ${((100 * k) / Math.max(1, n)).toFixed(1)} %`;

/** A face-centred cubic reference from the simulator's reflection classes (h² + k² + l² → intensity), lines by decreasing d. */
export function cubicReference(name: string, a: number, classes: ReadonlyMap<number, number>, tags: string[]): Reference {
  const lines = [...classes].map(([s, intensity]) => ({ d: a / Math.sqrt(s), intensity, hkl: hklOfClass(s)! }));
  return { name, formula: 'X', tags, source: 'accuracy-test simulator', lines: lines.sort((p, q) => q.d - p.d) };
}
