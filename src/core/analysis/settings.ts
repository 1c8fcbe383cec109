/**
 * The one table of analysis settings: names with units, ranges, defaults and the sentence a chemist
 * reads when a value is out of range. The CLI flags, the app's project settings and the batch all
 * check their values here, so one option has one set of limits wherever it is given.
 */
import { z } from 'zod';

export { NUMBER_SETTINGS, rangeMessage, type NumberSettingName } from '../model/setting-ranges.js';
import { InputError } from '../errors.js';
import { NUMBER_SETTINGS, rangeMessage, type NumberSettingName } from '../model/setting-ranges.js';
import { anodeWavelength, parseWavelength, type Wavelength } from '../model/wavelengths.js';
import { SCHERRER_K_PRESETS } from '../size/scherrer.js';
import { RADIATION_SOURCES, type RadiationSource } from '../match/satellites.js';
import { BREADTH_KINDS, CORRECTION_KINDS, type BreadthKind, type CorrectionKind } from '../size/voigt.js';

/** A zod number within the table's range, with the table's sentence as its error. */
export function settingNumber(name: NumberSettingName): z.ZodNumber {
  const s = NUMBER_SETTINGS[name];
  const error = rangeMessage(name);
  return z.number({ error }).finite({ error }).min(s.min, { error }).max(s.max, { error });
}

export interface AnalysisSettings {
  /** The user's wavelength; null means the one named in the file, else Cu Kα1/Kα2. */
  wavelength: Wavelength | null;
  /** Matching tolerance, degrees 2θ at Cu Kα1: held as the same precision in d at the pattern's wavelength. */
  toleranceDeg: number;
  /** Matching tolerance directly in d, Å; when set it replaces toleranceDeg. */
  toleranceDAngstrom: number | null;
  /** Matching tolerance in units of the instrument's FWHM (each peak's own without a profile); when set it replaces toleranceDeg. */
  toleranceFwhm: number | null;
  /** Most phases the explanation may take (it stops earlier when nothing significant is left). */
  phaseLimit: number;
  /** Goniometer radius, mm: converts the refined specimen displacement from °·cosθ to mm. */
  goniometerRadiusMm: number;
  /** How far each refined cell edge may move from its reference, % (angles by the same share of 90°). */
  cellBoundPercent: number;
  /** A reference spiked into the sample at internalStandardPercent (weight % of the spiked sample), for absolute fractions and the amorphous content; null: none. */
  internalStandard: string | null;
  internalStandardPercent: number | null;
  /** Hold the zero offset at the instrument profile's (measured on its standard) and refine only the displacement. */
  zeroFromInstrument: boolean;
  /** Scherrer K as a number or preset name. */
  k: number | string;
  breadth: BreadthKind;
  correction: CorrectionKind;
  /** Name of the expected phase, or null. */
  target: string | null;
  /** Background clipping half-width, degrees 2θ; null for automatic (see findPeaks). */
  backgroundHalfWidthDeg: number | null;
  /** A peak must stand this many σ above the background. */
  thresholdSigma: number;
  /** Size only from the lines of this phase (by library name), whatever the match finds; null: the target or best phase present. */
  sizePhase: string | null;
  /** The beam: which satellite lines (Kβ, W Lα) to expect. */
  source: RadiationSource;
}

export const DEFAULT_ANALYSIS_SETTINGS: AnalysisSettings = {
  wavelength: null,
  toleranceDeg: 0.1,
  toleranceDAngstrom: null,
  toleranceFwhm: null,
  phaseLimit: 12,
  goniometerRadiusMm: 240,
  cellBoundPercent: 2,
  internalStandard: null,
  internalStandardPercent: null,
  zeroFromInstrument: true,
  k: 0.9,
  breadth: 'fwhm',
  correction: 'voigt',
  target: null,
  backgroundHalfWidthDeg: null,
  thresholdSigma: 3,
  sizePhase: null,
  source: 'ni-filter',
};

const presetIds = SCHERRER_K_PRESETS.map((p) => p.id);
const kMessage = `${rangeMessage('scherrerK')}, or one of ${presetIds.join(', ')}`;

/** Settings as they arrive from a flag, a form or a file: every field optional, names as above. */
const analysisSettingsInput = z
  .object({
    wavelength: z.string().trim().min(1).max(20).nullable(),
    toleranceDeg: settingNumber('toleranceDeg'),
    toleranceDAngstrom: settingNumber('toleranceDAngstrom').nullable(),
    toleranceFwhm: settingNumber('toleranceFwhm').nullable(),
    phaseLimit: settingNumber('phaseLimit').int({ error: rangeMessage('phaseLimit') }),
    goniometerRadiusMm: settingNumber('goniometerRadiusMm'),
    cellBoundPercent: settingNumber('cellBoundPercent'),
    internalStandard: z.string().trim().min(1).max(200).nullable(),
    internalStandardPercent: settingNumber('internalStandardPercent').nullable(),
    zeroFromInstrument: z.boolean({ error: 'zeroFromInstrument must be true or false' }),
    k: z.union([settingNumber('scherrerK'), z.string().trim().toLowerCase().refine((v) => presetIds.includes(v))], { error: kMessage }),
    breadth: z.enum(BREADTH_KINDS as [BreadthKind, ...BreadthKind[]], { error: `breadth must be ${BREADTH_KINDS.join(' or ')}` }),
    correction: z.enum(CORRECTION_KINDS as [CorrectionKind, ...CorrectionKind[]], { error: `correction must be ${CORRECTION_KINDS.join(', ')}` }),
    target: z.string().trim().min(1).max(200).nullable(),
    backgroundHalfWidthDeg: settingNumber('backgroundHalfWidthDeg').nullable(),
    thresholdSigma: settingNumber('thresholdSigma'),
    sizePhase: z.string().trim().min(1).max(200).nullable(),
    source: z.enum(RADIATION_SOURCES, { error: `the radiation source must be one of ${RADIATION_SOURCES.join(', ')}` }),
  })
  .partial()
  .strict();

export type AnalysisSettingsInput = z.input<typeof analysisSettingsInput>;

/**
 * Check settings and fill in the defaults. `names` says what each field is called where the user gave
 * it (a flag such as "--tolerance"), so the message points at the thing they typed.
 */
export function resolveAnalysisSettings(input: unknown, names: Partial<Record<keyof AnalysisSettings, string>> = {}): AnalysisSettings {
  const parsed = analysisSettingsInput.safeParse(input);
  if (!parsed.success) {
    const issue = parsed.error.issues[0]!;
    const field = String(issue.path[0] ?? '') as keyof AnalysisSettings;
    const where = names[field] ? `${names[field]}: ` : '';
    throw new InputError(`${where}${issue.message}`);
  }
  const { wavelength, ...rest } = parsed.data;
  if ((rest.internalStandard == null) !== (rest.internalStandardPercent == null)) {
    const where = [names.internalStandard, names.internalStandardPercent].filter(Boolean).join(' and ');
    throw new InputError(`${where ? `${where}: ` : ''}an internal standard needs both its name and its weight % in the spiked sample`);
  }
  if (rest.toleranceDAngstrom != null && rest.toleranceFwhm != null) {
    const where = [names.toleranceDAngstrom, names.toleranceFwhm].filter(Boolean).join(' and ');
    throw new InputError(`${where ? `${where}: ` : ''}give the matching tolerance one way only (in d or in FWHM units)`);
  }
  const defined = Object.fromEntries(Object.entries(rest).filter(([, v]) => v !== undefined));
  const settings: AnalysisSettings = {
    ...DEFAULT_ANALYSIS_SETTINGS,
    ...defined,
    wavelength: wavelength ? parseWavelength(wavelength) : null,
  };
  // A K preset belongs with one breadth (Langford & Wilson 1978): given alone it brings its breadth; given with the other, it is refused.
  const preset = typeof settings.k === 'string' ? SCHERRER_K_PRESETS.find((p) => p.id === settings.k) : undefined;
  if (preset && preset.breadth !== settings.breadth) {
    if (rest.breadth !== undefined) {
      const where = names.k ? `${names.k}: ` : '';
      throw new InputError(
        `${where}the Scherrer K preset "${preset.id}" (K = ${preset.k}) belongs with the ${breadthName(preset.breadth)}, not the ${breadthName(settings.breadth)}; choose a K for the ${breadthName(settings.breadth)} or leave the breadth to the preset`,
      );
    }
    settings.breadth = preset.breadth;
  }
  return settings;
}

function breadthName(breadth: BreadthKind): string {
  return breadth === 'fwhm' ? 'FWHM' : 'integral breadth';
}

/** The wavelength an analysis uses: the setting, else the one named in the file, else Cu Kα1/Kα2. */
export function effectiveWavelength(settings: Pick<AnalysisSettings, 'wavelength'>, fromFile: Wavelength | null | undefined): Wavelength {
  return settings.wavelength ?? fromFile ?? anodeWavelength('Cu');
}
