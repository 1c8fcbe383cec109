import { existsSync, mkdirSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { UnitCell } from '../core/model/cell.js';
import { patternToXyText, simulatePattern, TYPICAL_LAB_INSTRUMENT, type SimulatedPhase } from '../core/crystal/simulate.js';
import { positionsFromCell, referenceFromCif } from '../core/library/from-crystal.js';
import type { Reference, StoredReference } from '../core/model/reference.js';
import { loadSeedReferences, seedFolder } from '../node/library/seed.js';
import { anodeWavelength } from '../core/model/wavelengths.js';
import { InputError } from '../core/errors.js';
import type { ProjectState, SampleSummary } from '../api/contract.js';
import type { Workspace } from './workspace.js';

/**
 * The demo project: a scenario of our own, entirely simulated by the app and labelled so. A lead
 * halide perovskite (methylammonium lead iodide) is made, worked up five ways, and left in humid
 * air for 0–48 h, where it hydrates (the monohydrate's new line near 8.5° 2θ) and loses PbI2
 * (12.7° 2θ). A LaB6 pattern stands for the instrument's line-profile standard.
 */
const DEMO_PROJECT_NAME = 'Demo: MAPbI3 workup and humid air (simulated)';

export const DEMO_SAFETY_NOTE =
  'Methylammonium lead iodide contains lead and is moisture-sensitive: real samples are handled under the lab’s own chemical-hygiene and radiation-safety rules.';

interface DemoPhase {
  key: 'target' | 'hydrate' | 'pbi2' | 'standard';
  name: string;
  formula: string;
  tags: string[];
  /** File names (lower case, without .cif) that hold this structure in reference-patterns/cif. */
  cifNames: RegExp;
  /** Fallback when no CIF ships: positions only, from the cell (values from memory). */
  cell: UnitCell;
}

const PHASES: DemoPhase[] = [
  { key: 'target', name: 'methylammonium lead iodide', formula: 'CH3NH3PbI3', tags: ['target'], cifNames: /^(mapbi3|ch3nh3pbi3|methylammonium[-_ ]lead[-_ ]iodide)(?!.*(h2o|hydrate))/, cell: { a: 8.874, b: 8.874, c: 12.671, alpha: 90, beta: 90, gamma: 90, spaceGroup: 'I 4/m c m' } },
  { key: 'hydrate', name: 'methylammonium lead iodide monohydrate', formula: 'CH3NH3PbI3·H2O', tags: ['decomposition product'], cifNames: /(mapbi3|ch3nh3pbi3|perovskite).*(h2o|hydrate)/, cell: { a: 10.46, b: 4.63, c: 11.1, alpha: 90, beta: 101.5, gamma: 90, spaceGroup: 'P 1 21/m 1' } },
  { key: 'pbi2', name: 'lead iodide', formula: 'PbI2', tags: ['decomposition product', 'precursor'], cifNames: /^(pbi2|lead[-_ ]iodide)/, cell: { a: 4.557, b: 4.557, c: 6.979, alpha: 90, beta: 90, gamma: 120, spaceGroup: 'P -3 m 1' } },
  { key: 'standard', name: 'lanthanum hexaboride', formula: 'LaB6', tags: ['standard'], cifNames: /^(lab6|lanthanum[-_ ]hexaboride)/, cell: { a: 4.15689, b: 4.15689, c: 4.15689, alpha: 90, beta: 90, gamma: 90, spaceGroup: 'P m -3 m' } },
];

/** Crystallite sizes the variants were simulated with (the truth the tool should recover). */
export const DEMO_VARIANT_SIZES_NM: ReadonlyArray<{ variant: string; sizeNm: number; temperatureC?: number }> = [
  { variant: 'as made', sizeNm: 48 },
  { variant: 'ground', sizeNm: 46 },
  { variant: 'washed', sizeNm: 48 },
  { variant: 'sonicated', sizeNm: 47 },
  // An annealing ladder (growth with temperature is our own choice), so the demo has a temperature series.
  { variant: 'annealed 80 °C', sizeNm: 58, temperatureC: 80 },
  { variant: 'annealed 100 °C', sizeNm: 75, temperatureC: 100 },
  { variant: 'annealed 120 °C', sizeNm: 92, temperatureC: 120 },
];

export const DEMO_EXPOSURE_HOURS = [0, 2, 6, 24, 48] as const;

/** Scale of the monohydrate and of PbI2 after t hours of humid air (first-order growth, our own choice). */
export function demoImpurityScales(hours: number): { hydrate: number; pbi2: number } {
  return { hydrate: 0.45 * (1 - Math.exp(-hours / 18)), pbi2: 0.15 * (1 - Math.exp(-hours / 30)) };
}

const WAVELENGTH = anodeWavelength('Cu');
const RANGE = { twoThetaMinDeg: 5, twoThetaMaxDeg: 60, stepDeg: 0.01 };


/**
 * The demo's references: the seed references that ship with the app (computed from the structure
 * CIFs in reference-patterns/cif), else computed from those CIFs here, else positions from cells.
 */
export function demoReferences(cifFolder: string = join(seedFolder(), 'cif')): Map<DemoPhase['key'], Reference> {
  const files = existsSync(cifFolder) ? readdirSync(cifFolder).filter((f) => f.toLowerCase().endsWith('.cif')) : [];
  const seeds = new Map(loadSeedReferences().map((r) => [r.name.toLowerCase(), r]));
  const out = new Map<DemoPhase['key'], Reference>();
  for (const phase of PHASES) {
    const seed = seeds.get(phase.name.toLowerCase());
    const file = files.find((f) => phase.cifNames.test(f.toLowerCase().replace(/\.cif$/, '')));
    let ref: Reference;
    if (seed) {
      ref = seed;
    } else if (file) {
      const computed = referenceFromCif(readFileSync(join(cifFolder, file), 'utf8'), file);
      ref = { ...computed, name: phase.name, formula: phase.formula, tags: phase.tags, source: `${computed.source} (reference-patterns/cif/${file})` };
    } else {
      ref = {
        name: phase.name,
        formula: phase.formula,
        tags: phase.tags,
        source: 'line positions computed from the unit cell (cell values from memory); no intensities',
        cell: phase.cell,
        lines: positionsFromCell(phase.cell, { name: phase.name, dMinAngstrom: 1.5 }).lines,
      };
    }
    out.set(phase.key, ref);
  }
  return out;
}

interface DemoFile {
  fileName: string;
  label: string;
  variant: string | null;
  hours: number | null;
  temperature: number | null;
  phases: SimulatedPhase[];
  seed: number;
}

function demoFiles(refs: Map<DemoPhase['key'], Reference>): DemoFile[] {
  const target = refs.get('target')!.lines;
  const files: DemoFile[] = DEMO_VARIANT_SIZES_NM.map((v, i) => ({
    fileName: `simulated_MAPbI3_${v.variant.replace(/[^a-z0-9]+/gi, '-')}.xy`,
    label: `MAPbI3 ${v.variant}`,
    variant: v.variant,
    hours: null,
    temperature: v.temperatureC ?? null,
    phases: [{ lines: target, scale: 1, sizeNm: v.sizeNm }],
    seed: 101 + i,
  }));
  DEMO_EXPOSURE_HOURS.forEach((hours, i) => {
    const { hydrate, pbi2 } = demoImpurityScales(hours);
    const phases: SimulatedPhase[] = [{ lines: target, scale: 1 - hydrate - pbi2, sizeNm: 48 }];
    if (hydrate > 0) phases.push({ lines: refs.get('hydrate')!.lines, scale: hydrate, sizeNm: 30 });
    if (pbi2 > 0) phases.push({ lines: refs.get('pbi2')!.lines, scale: pbi2, sizeNm: 40 });
    files.push({ fileName: `simulated_MAPbI3_humid-air_${hours}h.xy`, label: `humid air ${hours} h`, variant: null, hours, temperature: null, phases, seed: 201 + i });
  });
  return files;
}

export function demoTruth(): string {
  const sizes = DEMO_VARIANT_SIZES_NM.map((v) => `${v.variant} ${v.sizeNm} nm`).join(', ');
  const growth = DEMO_EXPOSURE_HOURS.map((h) => {
    const s = demoImpurityScales(h);
    return `${h} h: monohydrate ${(100 * s.hydrate).toFixed(0)} %, PbI2 ${(100 * s.pbi2).toFixed(0)} %`;
  }).join('; ');
  return (
    `Truth the patterns were simulated from (the library's references for methylammonium lead iodide (MAPbI3), its monohydrate, lead iodide and LaB6; ` +
    `Cu Kα1/Kα2, 5–60° 2θ in 0.01° steps, Poisson counting noise, a typical lab instrument broadening, LaB6 standard without size broadening): ` +
    `MAPbI3 crystallite sizes ${sizes}; exposure series at 48 nm with the monohydrate (30 nm) and PbI2 (40 nm) ` +
    `growing as share of the line scale — ${growth}. Only the annealed samples truly differ in size, growing with the annealing temperature. ${DEMO_SAFETY_NOTE}`
  );
}

let cachedReferences: Map<DemoPhase['key'], Reference> | null = null;

function references(): Map<DemoPhase['key'], Reference> {
  cachedReferences ??= demoReferences();
  return cachedReferences;
}

/** A simulated demo file: written to the app-data folder (so it can be dropped again) and returned as bytes. */
function writeDemoFile(workspace: Workspace, file: string, phases: SimulatedPhase[], seed: number, range: typeof RANGE = RANGE): Uint8Array {
  const folder = join(workspace.paths.root, 'demo-files');
  mkdirSync(folder, { recursive: true });
  const pattern = simulatePattern({ phases, wavelength: WAVELENGTH, ...range, instrument: TYPICAL_LAB_INSTRUMENT, peakCounts: 6000, noiseSeed: seed, name: file });
  const text = patternToXyText(pattern, [`SIMULATED by Crystallog for its demo project, not a measurement (${file})`, '2theta_deg counts', DEMO_SAFETY_NOTE]);
  writeFileSync(join(folder, file), text);
  return new TextEncoder().encode(text);
}

/**
 * Start the demo project: its references into the library, a new project with MAPbI3 as target, and
 * the LaB6 standard analysed and fitted as the instrument profile. The samples follow one per call
 * of addDemoSample (so the screens can show progress); `steps` says how many.
 */
export function startDemoProject(workspace: Workspace): { state: ProjectState; steps: number; pending: number[]; reopened: boolean } {
  const refs = references();
  const files = demoFiles(refs);
  // The demo project made before is opened again (with the samples it still lacks), not made twice.
  const existing = workspace.listProjects().find((p) => p.demo);
  if (existing) {
    const state = workspace.openProject(existing.id);
    const have = new Set(state.samples.map((s) => s.fileName));
    const pending = files.map((f, i) => (have.has(f.fileName) ? -1 : i)).filter((i) => i >= 0);
    return { state, steps: files.length, pending, reopened: true };
  }
  const stored = new Map<DemoPhase['key'], StoredReference>();
  for (const [key, ref] of refs) stored.set(key, workspace.references.save(ref));
  workspace.createProject(DEMO_PROJECT_NAME, { demo: true, truth: demoTruth() });
  workspace.updateSettings({ target: stored.get('target')!.name });
  const standardFile = 'simulated_LaB6_standard.xy';
  // The standard is measured over a wider range, so the instrument profile covers the samples' range with room to spare.
  const bytes = writeDemoFile(workspace, standardFile, [{ lines: refs.get('standard')!.lines, scale: 1 }], 301, { twoThetaMinDeg: 10, twoThetaMaxDeg: 100, stepDeg: 0.01 });
  const standard = workspace.addSample(standardFile, bytes, { label: 'LaB6 standard', variant: null, hours: null });
  try {
    workspace.saveInstrument(standard.id, stored.get('standard')!.name);
    // Analysed again with its own profile, so the standard is not shown out of date on first open.
    workspace.reanalyze(standard.id);
  } catch {
    // Without a usable standard fit the demo still works; sizes are then uncorrected lower bounds.
  }
  return { state: workspace.state(), steps: files.length, pending: files.map((_, i) => i), reopened: false };
}

/** Simulate, keep and analyse the demo's sample number `index` (0-based). */
export function addDemoSample(workspace: Workspace, index: number): SampleSummary {
  const file = demoFiles(references())[index];
  if (!file) throw new InputError(`the demo has no sample number ${index + 1}`);
  return workspace.addSample(file.fileName, writeDemoFile(workspace, file.fileName, file.phases, file.seed), { label: file.label, variant: file.variant, hours: file.hours, temperature: file.temperature });
}
