import { baseName } from '../model/file-name.js';
import type { UnitCell } from '../model/cell.js';
import { readCifStructures, type CifReflectionList, type CrystalStructure, type SkippedCifBlock } from '../crystal/structure.js';
import { computePowderLines, lorentzPolarization, mergeCoincidentLines, referenceFromCell, referenceFromStructure } from '../crystal/powder.js';
import { referenceIntensityRatio } from '../crystal/rir.js';
import { anodeWavelength, type Wavelength } from '../model/wavelengths.js';
import type { Reference } from '../model/reference.js';

/**
 * Line positions (no intensities) of a cell with the reflection conditions of its space group, with
 * the notes and intensity basis that say how they were made.
 */
export function positionsFromCell(cell: UnitCell, options: { name?: string; dMinAngstrom?: number } = {}): Reference {
  return referenceFromCell(cell, options);
}

export interface CifImportOptions {
  /** Radiation the computed relative intensities are for (default Cu Kα1, Bragg–Brentano). */
  wavelength?: Wavelength;
  dMinAngstrom?: number;
}

/** The references of a structure CIF (one per block with a cell and atom sites) and the blocks skipped. */
export function referencesFromCif(text: string, fileName: string, options: CifImportOptions = {}): { references: Reference[]; skipped: SkippedCifBlock[] } {
  const { structures, reflectionLists, skipped } = readCifStructures(text, fileName);
  return {
    references: [...structures.map((s) => referenceFromReadStructure(s, fileName, options)), ...reflectionLists.map((r) => referenceFromReflectionList(r, options))],
    skipped,
  };
}

/** A reference computed from a structure CIF (positions and intensities): its first structure. */
export function referenceFromCif(text: string, fileName: string, options: CifImportOptions = {}): Reference {
  return referencesFromCif(text, fileName, options).references[0];
}

function referenceFromReadStructure(structure: CrystalStructure, fileName: string, options: CifImportOptions): Reference {
  const wavelength = options.wavelength ?? anodeWavelength('Cu');
  const powder = { wavelength, ...(options.dMinAngstrom !== undefined ? { dMinAngstrom: options.dMinAngstrom } : {}) };
  const lines = computePowderLines(structure, powder);
  const ref = referenceFromStructure(structure, powder, lines);
  // Computed I/Ic lets the phase check quantify the phase (Chung's matrix flushing) without a measured RIR;
  // it takes the lines to the default d-minimum, the ones just computed unless another was asked for.
  ref.rir = Math.round(referenceIntensityRatio(structure, { wavelength, ...(options.dMinAngstrom === undefined ? { lines } : {}) }) * 100) / 100;
  if (!ref.source.trim()) ref.source = `computed from the structure in ${baseName(fileName)}`;
  if (!ref.name.trim()) ref.name = baseName(fileName).replace(/\.cif$/i, '');
  return ref;
}

/** Relative intensities below this (strongest = 100) are left out, as for a computed structure. */
const MIN_LISTED_INTENSITY = 0.01;

/**
 * A reference from a block's reflection list (no atom sites): m |F|² LP at the chosen wavelength
 * (Bragg–Brentano, no monochromator) when the file gives |F|², else the file's integrated intensities
 * as they are (for the file's own radiation), relative to the strongest = 100.
 */
function referenceFromReflectionList(list: CifReflectionList, options: CifImportOptions): Reference {
  const wavelength = options.wavelength ?? anodeWavelength('Cu');
  const fromF = list.reflections.some((r) => r.fSquared !== null);
  const raw = list.reflections
    .filter((r) => wavelength.lambda1 / (2 * r.d) < 1 && (options.dMinAngstrom === undefined || r.d >= options.dMinAngstrom))
    .sort((a, b) => b.d - a.d)
    .map((r) => {
      const twoTheta = (2 * Math.asin(wavelength.lambda1 / (2 * r.d)) * 180) / Math.PI;
      const intensity = fromF ? r.multiplicity * (r.fSquared ?? 0) * lorentzPolarization(twoTheta) : (r.intensity ?? 0);
      return { d: r.d, intensity, hkl: r.hkl, multiplicity: r.multiplicity };
    });
  const merged = mergeCoincidentLines(raw);
  const strongest = Math.max(...merged.map((l) => l.intensity ?? 0));
  const lines = merged
    .map((l) => ({ ...l, intensity: Math.round((1e5 * (l.intensity ?? 0)) / strongest) / 1e3 }))
    .filter((l) => l.intensity >= MIN_LISTED_INTENSITY);
  return {
    name: list.name,
    formula: list.formula ?? '',
    tags: [],
    source: list.source,
    notes: [`from the reflection list of data_${list.block} (${list.reflections.length} reflections; no atom sites)`, ...list.notes].join('; '),
    cell: { ...list.cell },
    intensityBasis: fromF
      ? `multiplicity × |F|² × Lorentz–polarization for ${wavelength.label} (λ = ${wavelength.lambda1} Å, Kα1 only), Bragg–Brentano, no monochromator; |F|² from ${list.basis}`
      : `integrated intensities from ${list.basis}, for the radiation of the file (not recomputed)`,
    lines,
  };
}
