import { basename } from 'node:path';
import type { UnitCell } from '../crystal/cell.js';
import { readCifStructure, referenceFromCell, referenceFromStructure, referenceIntensityRatio } from '../crystal/index.js';
import { anodeWavelength, type Wavelength } from '../pattern/wavelengths.js';
import type { Reference } from './reference.js';

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
  if (!ref.source.trim()) ref.source = `computed from the structure in ${basename(fileName)}`;
  if (!ref.name.trim()) ref.name = basename(fileName).replace(/\.cif$/i, '');
  return ref;
}
