/**
 * Satellite lines of a laboratory tube: the anode's Kβ (suppressed by a Ni/β filter, not removed) and
 * W Lα from tungsten evaporated onto the anode of an aged tube. A weak unexplained peak where a
 * strong peak's Kβ or W Lα line falls is marked as a possible satellite: it raises no low-angle alarm
 * and adds nothing to the unexplained area. Wavelengths: xraylib 4.0 LineEnergy (KB1_LINE; W LA1_LINE),
 * λ = hc/E.
 */
import { ANODE_LINES, type AnodeName, type Wavelength } from '../model/wavelengths.js';
import { DEG_TO_RAD } from '../model/units.js';
import type { PeakTable } from './peak-table.js';

export const RADIATION_SOURCES = ['ni-filter', 'no-filter', 'monochromator', 'synchrotron'] as const;
export type RadiationSource = (typeof RADIATION_SOURCES)[number];

/** Kβ1 wavelengths, Å (xraylib 4.0). */
const K_BETA: Readonly<Record<AnodeName, number>> = { Cr: 2.084924, Fe: 1.756648, Co: 1.620836, Cu: 1.392252, Mo: 0.63234, Ag: 0.497078 };
/** W Lα1, Å (xraylib 4.0). */
const W_L_ALPHA = 1.476424;

/**
 * Largest height of a satellite relative to its parent line, by source (generous bounds, common
 * practice: Kβ/Kα about 0.2 unfiltered and about 0.01 behind a Ni filter; W Lα a few % on old tubes).
 */
const MAX_RATIO: Readonly<Record<RadiationSource, { kBeta: number; wLAlpha: number }>> = {
  'ni-filter': { kBeta: 0.05, wLAlpha: 0.05 },
  'no-filter': { kBeta: 0.4, wLAlpha: 0.05 },
  monochromator: { kBeta: 0, wLAlpha: 0 },
  synchrotron: { kBeta: 0, wLAlpha: 0 },
};

/** The anode whose Kα1 this wavelength is, or null (a single line given in Å, a synchrotron). */
export function anodeOf(wavelength: Wavelength): AnodeName | null {
  if (wavelength.lambda2 === null) return null;
  for (const [anode, lines] of Object.entries(ANODE_LINES) as Array<[AnodeName, { kAlpha1: number }]>) {
    if (Math.abs(lines.kAlpha1 - wavelength.lambda1) < 1e-4) return anode;
  }
  return null;
}

/** For each peak of the table (by table index): the line it may be a satellite of, as a phrase, or null. */
export function satelliteMarks(table: PeakTable, wavelength: Wavelength, source: RadiationSource, toleranceDeg: number): Array<string | null> {
  const marks: Array<string | null> = new Array(table.count).fill(null);
  const anode = anodeOf(wavelength);
  if (!anode) return marks;
  const ratios = MAX_RATIO[source];
  const satellites = [
    { label: `${anode} Kβ`, lambda: K_BETA[anode], ratio: ratios.kBeta },
    { label: 'W Lα', lambda: W_L_ALPHA, ratio: ratios.wLAlpha },
  ].filter((s) => s.ratio > 0);
  for (let parent = 0; parent < table.count; parent++) {
    const d = table.peaks[parent].d;
    for (const s of satellites) {
      const sine = s.lambda / (2 * d);
      if (!(sine < 1)) continue;
      const at = (2 * Math.asin(sine)) / DEG_TO_RAD;
      for (let k = 0; k < table.count; k++) {
        if (k === parent || marks[k] !== null) continue;
        if (Math.abs(table.twoTheta[k] - at) <= toleranceDeg && table.height[k] <= s.ratio * table.height[parent]) {
          marks[k] = `${s.label} of the peak at ${table.twoTheta[parent].toFixed(3)}°`;
        }
      }
    }
  }
  return marks;
}
