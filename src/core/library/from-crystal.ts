import { baseName } from '../model/file-name.js';
import type { UnitCell } from '../model/cell.js';
import { readCifStructure } from '../crystal/structure.js';
import { referenceFromCell, referenceFromStructure } from '../crystal/powder.js';
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

/** A reference computed from a structure CIF (positions and intensities). */
export function referenceFromCif(text: string, fileName: string, options: CifImportOptions = {}): Reference {
  const structure = readCifStructure(text, fileName);
  const wavelength = options.wavelength ?? anodeWavelength('Cu');
  const ref = referenceFromStructure(structure, {
    wavelength,
    ...(options.dMinAngstrom !== undefined ? { dMinAngstrom: options.dMinAngstrom } : {}),
  });
  // Computed I/Ic lets the phase check quantify the phase (Chung's matrix flushing) without a measured RIR.
  ref.rir = Math.round(referenceIntensityRatio(structure, { wavelength }) * 100) / 100;
  if (!ref.source.trim()) ref.source = `computed from the structure in ${baseName(fileName)}`;
  if (!ref.name.trim()) ref.name = baseName(fileName).replace(/\.cif$/i, '');
  return ref;
}
