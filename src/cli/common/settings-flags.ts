import type { Command } from 'commander';
import { resolveAnalysisSettings, type AnalysisSettings } from '../../core/analysis/settings.js';

/** The analysis flags the commands share, as commander hands them over (text). */
export interface AnalysisFlags {
  wavelength?: string;
  tolerance?: string;
  k?: string;
  breadth?: string;
  correction?: string;
  target?: string;
  background?: string;
  threshold?: string;
  phase?: string;
  source?: string;
  toleranceD?: string;
  toleranceFwhm?: string;
  phaseLimit?: string;
  goniometerRadius?: string;
  cellBound?: string;
  refineZero?: boolean;
  internalStandard?: string;
  internalStandardPercent?: string;
}

/** The help of --tolerance wherever a command matches lines to peaks. */
export const TOLERANCE_HELP = 'matching tolerance, degrees 2θ at Cu Kα, held as the same precision in d at any wavelength (default 0.1)';

/** The matching flags beyond --tolerance that `match` and `analyze` share. */
export function addMatchFlags(command: Command): Command {
  return command
    .option('--tolerance-d <angstrom>', 'matching tolerance directly in d, Å (instead of --tolerance)')
    .option('--tolerance-fwhm <multiple>', "matching tolerance in units of the instrument profile's FWHM, or each peak's own without one (instead of --tolerance)")
    .option('--phase-limit <n>', 'most phases the explanation may take (default 12; it stops earlier when nothing significant is left)')
    .option('--goniometer-radius <mm>', 'goniometer radius, for the specimen displacement in mm (default 240)')
    .option('--cell-bound <percent>', 'how far each refined cell edge may move from its reference, % (default 2)')
    .option('--refine-zero', "refine the zero offset even when the instrument profile gives one (default: hold the profile's)")
    .option('--internal-standard <name>', 'a reference spiked into the sample (with --internal-standard-percent): absolute weight fractions and the amorphous content')
    .option('--internal-standard-percent <wt%>', 'weight % of the internal standard in the spiked sample');
}

/** Which flag sets which setting, so that a message names the flag the user typed. */
const FLAG_OF: Partial<Record<keyof AnalysisSettings, string>> = {
  wavelength: '--wavelength',
  toleranceDeg: '--tolerance',
  k: '--k',
  breadth: '--breadth',
  correction: '--correction',
  target: '--target',
  backgroundHalfWidthDeg: '--background',
  thresholdSigma: '--threshold',
  sizePhase: '--phase',
  source: '--source',
  toleranceDAngstrom: '--tolerance-d',
  toleranceFwhm: '--tolerance-fwhm',
  phaseLimit: '--phase-limit',
  goniometerRadiusMm: '--goniometer-radius',
  cellBoundPercent: '--cell-bound',
  zeroFromInstrument: '--refine-zero',
  internalStandard: '--internal-standard',
  internalStandardPercent: '--internal-standard-percent',
};

/** A number as typed (decimal comma allowed); text that is no number stays NaN and fails the range check. */
function numberText(text: string | undefined): number | undefined {
  return text === undefined ? undefined : Number(text.trim().replace(',', '.'));
}

/** K is a number or a preset name. */
function kText(text: string | undefined): number | string | undefined {
  if (text === undefined) return undefined;
  const n = numberText(text)!;
  return Number.isNaN(n) ? text : n;
}

/** Flags → the one settings table of the analysis (ranges, defaults and messages live there). */
export function settingsFromFlags(flags: AnalysisFlags): AnalysisSettings {
  const given: Record<keyof AnalysisSettings, string | undefined> = {
    wavelength: flags.wavelength,
    toleranceDeg: flags.tolerance,
    k: flags.k,
    breadth: flags.breadth,
    correction: flags.correction,
    target: flags.target,
    backgroundHalfWidthDeg: flags.background,
    thresholdSigma: flags.threshold,
    sizePhase: flags.phase,
    source: flags.source,
    toleranceDAngstrom: flags.toleranceD,
    toleranceFwhm: flags.toleranceFwhm,
    phaseLimit: flags.phaseLimit,
    goniometerRadiusMm: flags.goniometerRadius,
    cellBoundPercent: flags.cellBound,
    zeroFromInstrument: flags.refineZero ? 'given' : undefined,
    internalStandard: flags.internalStandard,
    internalStandardPercent: flags.internalStandardPercent,
  };
  const names = Object.fromEntries(
    Object.entries(FLAG_OF).map(([setting, flag]) => [setting, `option ${flag} ${given[setting as keyof AnalysisSettings] ?? ''}`.trimEnd()]),
  );
  return resolveAnalysisSettings(
    {
      wavelength: flags.wavelength,
      toleranceDeg: numberText(flags.tolerance),
      k: kText(flags.k),
      breadth: flags.breadth?.toLowerCase(),
      correction: flags.correction?.toLowerCase(),
      target: flags.target,
      backgroundHalfWidthDeg: numberText(flags.background),
      thresholdSigma: numberText(flags.threshold),
      sizePhase: flags.phase,
      source: flags.source?.toLowerCase(),
      toleranceDAngstrom: numberText(flags.toleranceD),
      toleranceFwhm: numberText(flags.toleranceFwhm),
      phaseLimit: numberText(flags.phaseLimit),
      goniometerRadiusMm: numberText(flags.goniometerRadius),
      cellBoundPercent: numberText(flags.cellBound),
      zeroFromInstrument: flags.refineZero ? false : undefined,
      internalStandard: flags.internalStandard,
      internalStandardPercent: numberText(flags.internalStandardPercent),
    },
    names,
  );
}
