/**
 * Lines of a reference typed by hand: "position intensity [h k l]" per line, the position given as
 * d (Å) or as 2θ (degrees) with the wavelength it was measured or computed for. Values are checked
 * against the range each column can hold, and a list of d values that reads as 2θ is caught.
 */
import { InputError } from '../errors.js';
import type { Reference } from './reference.js';
import { dFromTwoTheta } from './units.js';

export type HandColumn = 'd' | 'twoTheta';

/** Plausible ranges: d of a powder line 0.5–50 Å, 2θ of a laboratory scan 2–170° (common practice). */
export const HAND_RANGES = { d: [0.5, 50], twoTheta: [2, 170] } as const;

/**
 * Above this median d (Å) a list is taken for 2θ typed as d: most lines of a real phase lie below
 * 5 Å, while 2θ values of a Cu scan run from 10 to 80 (common practice).
 */
const MEDIAN_D_LIMIT = 8;

export function parseHandLines(text: string, column: HandColumn, wavelengthAngstrom: number): Reference['lines'] {
  const [low, high] = HAND_RANGES[column];
  const unit = column === 'd' ? 'd (Å)' : '2θ (°)';
  const out: Reference['lines'] = [];
  text.split('\n').forEach((raw, index) => {
    const line = raw.trim();
    if (!line || line.startsWith('#')) return;
    const where = `line ${index + 1} of the lines box`;
    const parts = line.split(/[\s,;]+/);
    const position = Number(parts[0]);
    const intensity = parts[1] === undefined || parts[1] === '-' ? null : Number(parts[1]);
    if (!Number.isFinite(position)) throw new InputError(`${where}: "${parts[0]}" is not a number; give ${unit}, then an intensity 0–100 or "-"`);
    if (position < low || position > high) {
      const hint = column === 'd' && position > high && position <= HAND_RANGES.twoTheta[1] ? ' — if these are 2θ values, choose "2θ (°)" for the first column' : '';
      throw new InputError(`${where}: ${unit} ${position} is outside ${low}–${high}${hint}`);
    }
    if (intensity !== null && !(intensity >= 0 && intensity <= 100)) throw new InputError(`${where}: give an intensity 0–100 or "-" after the ${unit}`);
    const d = column === 'd' ? position : dFromTwoTheta(position, wavelengthAngstrom);
    const hkl = parts.length >= 5 ? ([Number(parts[2]), Number(parts[3]), Number(parts[4])] as [number, number, number]) : undefined;
    out.push(hkl && hkl.every(Number.isInteger) ? { d, intensity, hkl } : { d, intensity });
  });
  if (column === 'd' && out.length >= 2) {
    const sorted = out.map((l) => l.d).sort((a, b) => a - b);
    const median = sorted[Math.floor(sorted.length / 2)]!;
    if (median > MEDIAN_D_LIMIT) {
      throw new InputError(
        `these values read as 2θ in degrees, not d: half the lines are above ${median} Å, where a phase has few lines; choose "2θ (°)" for the first column, or check the values`,
      );
    }
  }
  return out;
}
