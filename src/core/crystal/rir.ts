import { InputError } from '../errors.js';
import { ATOMIC_WEIGHTS, AVOGADRO_PER_MOL } from './atomic-weights.js';
import type { Hkl } from '../model/cell.js';
import { cellMetric } from './metric.js';
import { computePowderLines, lorentzPolarization, mergeCoincidentLines, type PowderLine, type PowderOptions } from './powder.js';
import { getSpaceGroup } from './space-groups.js';
import type { CrystalStructure } from './structure.js';
import { expandToUnitCell } from './structure-factors.js';

/** What one unit cell holds, and the density that follows. */
export interface CellContents {
  /** Element → atoms per cell (occupancy-weighted; elements named only by the formula included). */
  atoms: Map<string, number>;
  /** Formula units per cell, when the formula and the sites agree on one; else null. */
  z: number | null;
  massDalton: number;
  volumeAngstrom3: number;
  densityGPerCm3: number;
  notes: string[];
}

/** Element counts of a formula such as "C H6 I3 N Pb" or "Al2O3". */
function parseFormula(formula: string): Map<string, number> {
  const counts = new Map<string, number>();
  for (const m of formula.matchAll(/([A-Z][a-z]?)\s*(\d+(?:\.\d+)?)?/g)) counts.set(m[1], (counts.get(m[1]) ?? 0) + Number(m[2] ?? '1'));
  return counts;
}

/**
 * Cell contents from the atom sites expanded by symmetry; elements that the formula names but no
 * site holds (usually H) are added as formula count × Z, so the density counts them.
 * ρ = Σ m / (N_A V) (common practice).
 */
export function cellContents(structure: CrystalStructure): CellContents {
  const expanded = expandToUnitCell(structure);
  const atoms = new Map<string, number>();
  for (let j = 0; j < expanded.count; j++) {
    const site = expanded.site[j];
    const element = expanded.elements[expanded.siteSpecies[site]];
    atoms.set(element, (atoms.get(element) ?? 0) + expanded.siteOccupancy[site]);
  }
  const notes: string[] = [];
  const formula = structure.formula ? parseFormula(structure.formula) : new Map<string, number>();
  const ratios = [...formula].filter(([el]) => atoms.has(el)).map(([el, n]) => atoms.get(el)! / n);
  const z = ratios.length > 0 && ratios.every((r) => Math.abs(r / ratios[0] - 1) < 0.01) ? ratios[0] : null;
  if (z !== null) {
    for (const [element, n] of formula) {
      if (atoms.has(element)) continue;
      atoms.set(element, n * z);
      notes.push(`${element} (${n} per formula unit) is not in the atom sites; counted in the density from the formula`);
    }
  } else if (formula.size > 0) {
    notes.push(`the atom sites do not match the formula ${structure.formula}; density from the sites alone`);
  }
  let massDalton = 0;
  for (const [element, n] of atoms) {
    const weight = ATOMIC_WEIGHTS[element];
    if (weight === undefined) throw new InputError(`no atomic weight is tabulated for element "${element}"`, { file: structure.fileName });
    massDalton += n * weight;
  }
  const volumeAngstrom3 = cellMetric(structure.cell).volume;
  // 1 Å³ = 1e-24 cm³
  const densityGPerCm3 = massDalton / (AVOGADRO_PER_MOL * volumeAngstrom3 * 1e-24);
  return { atoms, z, massDalton, volumeAngstrom3, densityGPerCm3, notes };
}

/** The strongest powder line of a phase and its intensity per unit weight fraction. */
export interface IntensityPerWeight {
  /** max over lines of m|F|²LP / (V² ρ), in electrons² Å⁻⁶ cm³ g⁻¹ (arbitrary but common scale). */
  value: number;
  hkl: Hkl;
  d: number;
  twoThetaDeg: number;
  volumeAngstrom3: number;
  densityGPerCm3: number;
}

/**
 * Intensity of the strongest line per unit weight fraction in a mixture: I ∝ m|F|²LP/(V²ρ) × w/μ*
 * (Chung, J. Appl. Cryst. 7, 519 (1974)); lines at the same d (e.g. cubic 333/511) count as one peak.
 */
export function intensityPerUnitWeight(
  structure: CrystalStructure,
  options: PowderOptions,
  lines: readonly PowderLine[] = computePowderLines(structure, options),
): IntensityPerWeight {
  const raw = lines.map((l) => ({
    d: l.d,
    hkl: l.hkl,
    multiplicity: l.multiplicity,
    intensity: l.multiplicity * l.fSquared * lorentzPolarization(l.twoThetaDeg, options.monochromatorTwoThetaDeg),
  }));
  const best = mergeCoincidentLines(raw).reduce((a, b) => ((b.intensity ?? 0) > (a.intensity ?? 0) ? b : a));
  const { volumeAngstrom3, densityGPerCm3 } = cellContents(structure);
  return {
    value: (best.intensity ?? 0) / (volumeAngstrom3 * volumeAngstrom3 * densityGPerCm3),
    hkl: best.hkl ?? [0, 0, 0],
    d: best.d,
    twoThetaDeg: (2 * Math.asin(options.wavelength.lambda1 / (2 * best.d)) * 180) / Math.PI,
    volumeAngstrom3,
    densityGPerCm3,
  };
}

/**
 * Corundum, α-Al2O3, the reference phase of I/Ic: R -3 c (hexagonal axes), a = 4.7589, c = 12.991 Å,
 * Al 12c z = 0.35216, O 18e x = 0.30624 (Lewis, Schwarzenbach & Flack, Acta Cryst. A38, 733 (1982);
 * from memory, as in reference-patterns/cif/corundum.cif); U approximate (from memory).
 */
export function corundumStructure(): CrystalStructure {
  const spaceGroup = getSpaceGroup('R -3 c :H');
  const site = (label: string, element: string, x: number, y: number, z: number, uIso: number) =>
    ({ label, element, typeSymbol: element, x, y, z, occupancy: 1, uIso, line: 0 });
  return {
    name: 'corundum',
    formula: 'Al2O3',
    cell: { a: 4.7589, b: 4.7589, c: 12.991, alpha: 90, beta: 90, gamma: 120, spaceGroup: spaceGroup.symbol },
    spaceGroup,
    sites: [site('Al1', 'Al', 0, 0, 0.35216, 0.003), site('O1', 'O', 0.30624, 0, 0.25, 0.0035)],
    source: 'Lewis, Schwarzenbach & Flack, Acta Cryst. A38, 733 (1982) (from memory)',
    notes: [],
    fileName: 'built-in corundum',
  };
}

export interface RirOptions extends Omit<PowderOptions, 'dMinAngstrom'> {
  /** The corundum model to divide by (default: corundumStructure()). */
  corundum?: CrystalStructure;
  /** The phase's powder lines for these options (default d-minimum), when already computed: not computed twice. */
  lines?: readonly PowderLine[];
}

/**
 * Computed reference intensity ratio I/Ic: strongest-line intensity of the phase over that of
 * corundum in a 50:50 weight mixture, = [max(m|F|²LP)/(V²ρ)]phase / [same]corundum, with the same
 * wavelength, Lorentz–polarization and scattering factors, anomalous dispersion of that wavelength
 * included for both (Chung, J. Appl. Cryst. 7, 519 (1974);
 * Hubbard & Snyder, Powder Diffraction 3, 74 (1988)).
 */
export function referenceIntensityRatio(structure: CrystalStructure, options: RirOptions): number {
  const { corundum = corundumStructure(), lines, ...powder } = options;
  return intensityPerUnitWeight(structure, powder, lines).value / intensityPerUnitWeight(corundum, powder).value;
}
