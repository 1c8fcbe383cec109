import { InputError } from '../errors.js';

/** An X-ray source: a single line (lambda2 = null) or a Kα1/Kα2 doublet. Lengths in Å. */
export interface Wavelength {
  label: string;
  lambda1: number;
  lambda2: number | null;
  /** Intensity of Kα2 relative to Kα1 (0.5 by default: common practice). */
  ratio: number;
}

export type AnodeName = 'Cr' | 'Fe' | 'Co' | 'Cu' | 'Mo' | 'Ag';

/**
 * Kα1 / Kα2 wavelengths in Å.
 * Cr, Fe, Co, Cu: Hölzer et al., Phys. Rev. A 56, 4554 (1997).
 * Mo, Ag: International Tables for Crystallography Vol. C, Table 4.2.2.1.
 * (Values as listed in the project's CHECK-VALUES; xraylib 4 agrees to within 6e-5 Å.)
 */
export const ANODE_LINES: Readonly<Record<AnodeName, { kAlpha1: number; kAlpha2: number }>> = {
  Cr: { kAlpha1: 2.289726, kAlpha2: 2.293651 },
  Fe: { kAlpha1: 1.936041, kAlpha2: 1.939973 },
  Co: { kAlpha1: 1.788996, kAlpha2: 1.792835 },
  Cu: { kAlpha1: 1.5405929, kAlpha2: 1.544414 },
  Mo: { kAlpha1: 0.709317, kAlpha2: 0.713607 },
  Ag: { kAlpha1: 0.559421, kAlpha2: 0.563813 },
};

/** Kα2/Kα1 intensity ratio used unless told otherwise (common practice). */
export const DEFAULT_KALPHA2_RATIO = 0.5;

export function anodeWavelength(anode: AnodeName, ratio = DEFAULT_KALPHA2_RATIO): Wavelength {
  const lines = ANODE_LINES[anode];
  return { label: `${anode} Kα1/Kα2`, lambda1: lines.kAlpha1, lambda2: lines.kAlpha2, ratio };
}

export function singleWavelength(lambdaAngstrom: number): Wavelength {
  if (!Number.isFinite(lambdaAngstrom) || lambdaAngstrom <= 0.05 || lambdaAngstrom > 10) {
    throw new InputError(
      `wavelength ${lambdaAngstrom} Å is not a usable X-ray wavelength; give one between 0.05 and 10 Å, or an anode (Cu, Co, Fe, Cr, Mo, Ag)`,
    );
  }
  return { label: `${lambdaAngstrom} Å`, lambda1: lambdaAngstrom, lambda2: null, ratio: 0 };
}

function isAnodeName(text: string): text is AnodeName {
  return Object.prototype.hasOwnProperty.call(ANODE_LINES, text);
}

/**
 * Parse a user's wavelength: an anode symbol (any case: "cu", "CuKa") or a number in Å
 * (decimal point or comma).
 */
export function parseWavelength(text: string): Wavelength {
  const trimmed = text.trim();
  const anode = trimmed.replace(/\s*k\s*(a|α|alpha)\s*[12]?$/i, '');
  const symbol = anode.charAt(0).toUpperCase() + anode.slice(1).toLowerCase();
  if (isAnodeName(symbol)) return anodeWavelength(symbol);
  const value = Number(trimmed.replace(',', '.'));
  if (trimmed === '' || !Number.isFinite(value)) {
    throw new InputError(
      `"${text}" is not a wavelength; give an anode (Cu, Co, Fe, Cr, Mo, Ag) or a number in Å such as 1.5406`,
    );
  }
  return singleWavelength(value);
}
