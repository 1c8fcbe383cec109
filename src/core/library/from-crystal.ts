import { baseName } from '../model/file-name.js';
import type { UnitCell } from '../model/cell.js';
import { readCifStructures, type CrystalStructure, type SkippedCifBlock } from '../crystal/structure.js';
import { computePowderLines, referenceFromCell, referenceFromStructure } from '../crystal/powder.js';
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
  const { structures, skipped } = readCifStructures(text, fileName);
  return { references: structures.map((s) => referenceFromReadStructure(s, fileName, options)), skipped };
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
