/**
 * Scherrer equation τ = Kλ/(β cosθ) (Scherrer, Nachr. Ges. Wiss. Göttingen 1918, 98), β the sample
 * breadth in radians of 2θ, τ the volume-weighted apparent crystallite size.
 */
import { InputError } from '../errors.js';
import { DEG_TO_RAD } from '../model/units.js';
import type { BreadthKind } from './voigt.js';

export interface ScherrerConstant {
  id: string;
  k: number;
  /** The breadth this K belongs with. */
  breadth: BreadthKind;
  description: string;
  source: string;
}

/** Scherrer constants a user may pick by name. */
export const SCHERRER_K_PRESETS: readonly ScherrerConstant[] = [
  { id: 'default', k: 0.9, breadth: 'fwhm', description: 'usual rounded value for FWHM', source: 'common practice' },
  { id: 'spheres', k: 0.89, breadth: 'fwhm', description: 'spherical crystallites, FWHM', source: 'Scherrer 1918; as quoted in Langford & Wilson, J. Appl. Cryst. 11, 102 (1978)' },
  { id: 'cubes', k: 0.94, breadth: 'fwhm', description: 'cubic crystallites, FWHM', source: 'Scherrer 1918; as quoted in Langford & Wilson, J. Appl. Cryst. 11, 102 (1978)' },
  {
    id: 'column-length',
    k: 1.0,
    breadth: 'integral',
    description: 'volume-weighted column length, integral breadth',
    source: 'Stokes & Wilson, Proc. Camb. Phil. Soc. 38, 313 (1942)',
  },
  { id: 'sphere-fwhm', k: 0.829, breadth: 'fwhm', description: 'sphere, FWHM (shape-specific)', source: 'Langford & Wilson, J. Appl. Cryst. 11, 102 (1978) (value from memory)' },
  {
    id: 'sphere-integral',
    k: 1.0747,
    breadth: 'integral',
    description: 'sphere, integral breadth (shape-specific)',
    source: 'Langford & Wilson, J. Appl. Cryst. 11, 102 (1978) (value from memory)',
  },
];

const DEFAULT_SCHERRER_K = 0.9;

/** A K given as a preset name or a number (0.5–2). */
export function resolveScherrerK(value: string | number | undefined): { k: number; source: string; preset: string | null } {
  if (value === undefined) return { k: DEFAULT_SCHERRER_K, source: 'common practice', preset: 'default' };
  const text = String(value).trim();
  const preset = SCHERRER_K_PRESETS.find((p) => p.id === text.toLowerCase());
  if (preset) return { k: preset.k, source: preset.source, preset: preset.id };
  const k = Number(text.replace(',', '.'));
  if (!Number.isFinite(k) || k < 0.5 || k > 2) {
    throw new InputError(
      `Scherrer K "${text}" is not usable; give a number between 0.5 and 2 or a preset (${SCHERRER_K_PRESETS.map((p) => p.id).join(', ')})`,
    );
  }
  const matching = SCHERRER_K_PRESETS.find((p) => p.k === k);
  return { k, source: matching ? matching.source : 'given by the user', preset: matching ? matching.id : null };
}

/** Scherrer size in nm from a sample breadth in degrees 2θ at a peak position in degrees 2θ (Infinity for zero breadth). */
export function scherrerSizeNm(breadthDeg: number, twoThetaDeg: number, wavelengthAngstrom: number, k: number): number {
  const cosTheta = Math.cos((twoThetaDeg / 2) * DEG_TO_RAD);
  return (k * wavelengthAngstrom) / (breadthDeg * DEG_TO_RAD * cosTheta) / 10;
}

/** The sample breadth in degrees 2θ that a size in nm gives (the Scherrer equation solved for β). */
export function scherrerBreadthDeg(sizeNm: number, twoThetaDeg: number, wavelengthAngstrom: number, k: number): number {
  const cosTheta = Math.cos((twoThetaDeg / 2) * DEG_TO_RAD);
  return (k * wavelengthAngstrom) / (sizeNm * 10 * cosTheta) / DEG_TO_RAD;
}
