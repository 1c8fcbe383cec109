import { InputError } from '../errors.js';
import type { Reference, ReferenceLine } from '../model/reference.js';
import type { Wavelength } from '../model/wavelengths.js';
import type { UnitCell } from '../model/cell.js';
import { enumerateReflections, generateReflections, spaceGroupOfCell } from './reflections.js';
import { SCATTERING_FACTOR_SOURCE } from './scattering-factors.js';
import type { CrystalStructure } from './structure.js';
import { dispersionForWavelength, expandToUnitCell, powderStructureFactorSquared, structureFactorContext, type Dispersion } from './structure-factors.js';

const DEG = Math.PI / 180;

/**
 * Lorentz–polarization factor for Bragg–Brentano geometry: (1 + cos²2θ)/(sin²θ cosθ); with a
 * monochromator at 2θm: (1 + cos²2θ cos²2θm)/(sin²θ cosθ (1 + cos²2θm))
 * (International Tables for Crystallography Vol. C, section 6.2.2; common practice).
 */
export function lorentzPolarization(twoThetaDeg: number, monochromatorTwoThetaDeg?: number): number {
  const theta = (twoThetaDeg / 2) * DEG;
  const cos2t = Math.cos(2 * theta);
  const sin = Math.sin(theta);
  const geometric = sin * sin * Math.cos(theta);
  if (monochromatorTwoThetaDeg === undefined) return (1 + cos2t * cos2t) / geometric;
  const cm = Math.cos(monochromatorTwoThetaDeg * DEG);
  return (1 + cos2t * cos2t * cm * cm) / (geometric * (1 + cm * cm));
}

export interface PowderOptions {
  wavelength: Wavelength;
  /** Smallest d-spacing, Å (default: the d at 150° 2θ for the wavelength's Kα1). */
  dMinAngstrom?: number;
  /** Monochromator 2θ in degrees (omit for none). */
  monochromatorTwoThetaDeg?: number;
  /**
   * Add the anomalous-dispersion terms f′, f″ of the wavelength's Kα1 line when it is a tabulated
   * anode line (default true); other wavelengths get none either way.
   */
  anomalousDispersion?: boolean;
}

/** One class of equivalent reflections with its computed intensity. */
export interface PowderLine {
  hkl: [number, number, number];
  d: number;
  twoThetaDeg: number;
  multiplicity: number;
  /** ½(|F(hkl)|² + |F(−h−k−l)|²) in electrons² (the two differ only with f″ in a non-centrosymmetric structure). */
  fSquared: number;
  /** Multiplicity × |F|² × LP, scaled so the strongest line is 100. */
  relativeIntensity: number;
}

const DEFAULT_TWO_THETA_MAX_DEG = 150;

function checkOptions(options: PowderOptions): { lambda: number; dMin: number; dispersion: Dispersion } {
  const lambda = options.wavelength.lambda1;
  if (!(Number.isFinite(lambda) && lambda > 0)) throw new InputError(`wavelength ${lambda} Å is not usable`);
  const reach = lambda / 2;
  const requested = options.dMinAngstrom ?? lambda / (2 * Math.sin((DEFAULT_TWO_THETA_MAX_DEG / 2) * DEG));
  if (!(requested > 0)) throw new InputError(`d-minimum ${requested} Å must be a positive number`);
  const m = options.monochromatorTwoThetaDeg;
  if (m !== undefined && !(Number.isFinite(m) && m >= 0 && m < 180)) {
    throw new InputError(`monochromator angle ${m}° 2θ must lie between 0° and 180°`);
  }
  return { lambda, dMin: Math.max(requested, reach * (1 + 1e-9)), dispersion: dispersionForWavelength(lambda, options.anomalousDispersion ?? true) };
}

/**
 * Powder lines of a structure, one per class of equivalent reflections (not merged with
 * accidental coincidences), intensities = multiplicity × |F|² × LP relative to the strongest = 100,
 * |F|² with the anomalous dispersion of the wavelength (see PowderOptions.anomalousDispersion).
 */
export function computePowderLines(structure: CrystalStructure, options: PowderOptions): PowderLine[] {
  const { lambda, dMin, dispersion } = checkOptions(options);
  const list = enumerateReflections(structure.cell, structure.spaceGroup, dMin);
  const limits: [number, number, number] = [0, 0, 0];
  for (let i = 0; i < list.count; i++) {
    limits[0] = Math.max(limits[0], Math.abs(list.h[i]));
    limits[1] = Math.max(limits[1], Math.abs(list.k[i]));
    limits[2] = Math.max(limits[2], Math.abs(list.l[i]));
  }
  const ctx = structureFactorContext(expandToUnitCell(structure), limits, dispersion.terms);
  // |F|² taken in order of h and k, so reflections that differ in l alone share their exp(2πi(hx + ky)).
  const order = Int32Array.from({ length: list.count }, (_, i) => i).sort((i, j) => list.h[i] - list.h[j] || list.k[i] - list.k[j]);
  const fSquaredOf = new Float64Array(list.count);
  for (const i of order) fSquaredOf[i] = powderStructureFactorSquared(ctx, list.h[i], list.k[i], list.l[i], 1 / (4 * list.d[i] * list.d[i]));
  const lines: PowderLine[] = [];
  let strongest = 0;
  for (let i = 0; i < list.count; i++) {
    const d = list.d[i];
    const fSquared = fSquaredOf[i];
    const twoThetaDeg = (2 * Math.asin(lambda / (2 * d))) / DEG;
    const raw = list.multiplicity[i] * fSquared * lorentzPolarization(twoThetaDeg, options.monochromatorTwoThetaDeg);
    if (raw > strongest) strongest = raw;
    lines.push({ hkl: [list.h[i], list.k[i], list.l[i]], d, twoThetaDeg, multiplicity: list.multiplicity[i], fSquared, relativeIntensity: raw });
  }
  if (!(strongest > 0)) throw new InputError(`the structure in ${structure.fileName} scatters no X-rays in the range computed (all |F|² are zero)`);
  for (const line of lines) line.relativeIntensity = (100 * line.relativeIntensity) / strongest;
  return lines;
}

/**
 * Merge lines whose d-spacings coincide (|Δd| ≤ 1e-6·d, e.g. cubic 333 and 511): intensities and
 * multiplicities add, the hkl is that of the stronger line (the first when they agree to 1e-9). Input sorted by decreasing d.
 */
export function mergeCoincidentLines(lines: readonly ReferenceLine[]): ReferenceLine[] {
  const merged: ReferenceLine[] = [];
  for (const line of lines) {
    const last = merged[merged.length - 1];
    if (last && Math.abs(last.d - line.d) <= 1e-6 * line.d) {
      // Stronger by more than rounding: lines equal by symmetry-like coincidence keep the first hkl, whatever the order of summation.
      const stronger = (line.intensity ?? 0) > (last.intensity ?? 0) * (1 + 1e-9);
      merged[merged.length - 1] = {
        d: last.d,
        intensity: last.intensity === null || line.intensity === null ? null : last.intensity + line.intensity,
        ...(stronger ? (line.hkl ? { hkl: line.hkl } : {}) : last.hkl ? { hkl: last.hkl } : {}),
        multiplicity: (last.multiplicity ?? 0) + (line.multiplicity ?? 0),
      };
    } else merged.push({ ...line });
  }
  return merged;
}

/** Lines weaker than this (on the 0–100 scale) are left out of a computed reference. */
const MIN_RELATIVE_INTENSITY = 0.01;

function roundTo(value: number, digits: number): number {
  const f = 10 ** digits;
  return Math.round(value * f) / f;
}

/** A reference (relative intensities 0–100) computed from a crystal structure (from its lines for these options, when already computed). */
export function referenceFromStructure(
  structure: CrystalStructure,
  options: PowderOptions,
  lines: readonly PowderLine[] = computePowderLines(structure, options),
): Reference {
  const merged = mergeCoincidentLines(lines.map((l) => ({ d: l.d, intensity: l.relativeIntensity, hkl: l.hkl, multiplicity: l.multiplicity })));
  const strongest = Math.max(...merged.map((l) => l.intensity ?? 0));
  const kept = merged
    .map((l) => ({ ...l, intensity: roundTo((100 * (l.intensity ?? 0)) / strongest, 3) }))
    .filter((l) => l.intensity >= MIN_RELATIVE_INTENSITY);
  const { lambda, dMin, dispersion } = checkOptions(options);
  const mono = options.monochromatorTwoThetaDeg === undefined ? 'no monochromator' : `monochromator at ${options.monochromatorTwoThetaDeg}° 2θ`;
  return {
    name: structure.name,
    formula: structure.formula ?? '',
    tags: [],
    source: structure.source,
    notes: [
      `computed from the structure (space group ${structure.spaceGroup.symbol}, ${structure.sites.length} sites) to d = ${roundTo(dMin, 4)} Å`,
      ...structure.notes,
    ].join('; '),
    cell: { ...structure.cell },
    intensityBasis:
      `computed from crystal structure for ${options.wavelength.label} (λ = ${lambda} Å, Kα1 only), Bragg–Brentano ` +
      `Lorentz–polarization, ${mono}; X-ray scattering factors: ${SCATTERING_FACTOR_SOURCE}; isotropic displacement; ${dispersion.description}`,
    lines: kept,
  };
}

/** Default smallest d-spacing for positions from a cell alone, Å (about 140° 2θ with Cu Kα; common practice). */
const DEFAULT_CELL_D_MIN = 0.8;

/** A reference with line positions only (intensities null) from a cell and its space group. */
export function referenceFromCell(cell: UnitCell, options: { dMinAngstrom?: number; name?: string } = {}): Reference {
  const group = spaceGroupOfCell(cell);
  const dMin = options.dMinAngstrom ?? DEFAULT_CELL_D_MIN;
  const lines = generateReflections(cell, dMin);
  const fmt = (v: number): string => String(roundTo(v, 5));
  const cellText = `a ${fmt(cell.a)}, b ${fmt(cell.b)}, c ${fmt(cell.c)} Å, α ${fmt(cell.alpha)}, β ${fmt(cell.beta)}, γ ${fmt(cell.gamma)}°`;
  const noGroup = !cell.spaceGroup || cell.spaceGroup.trim() === '';
  return {
    name: options.name ?? `cell ${cellText} ${group.symbol}`,
    formula: '',
    tags: [],
    source: `line positions computed from the cell (${cellText}) and space group ${group.symbol}`,
    notes:
      `positions only, intensities unknown; reflection conditions of ${group.symbol}, to d = ${dMin} Å` +
      (noGroup ? '; no space group given, so every reflection of a primitive cell (P 1) is listed' : ''),
    cell: { ...cell, spaceGroup: group.symbol },
    intensityBasis: 'none (positions only)',
    lines: mergeCoincidentLines(lines),
  };
}
