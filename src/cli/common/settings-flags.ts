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
    },
    names,
  );
}
