/**
 * The one table of analysis settings: names with units, ranges, defaults and the sentence a chemist
 * reads when a value is out of range. The CLI flags, the app's project settings and the batch all
 * check their values here, so one option has one set of limits wherever it is given.
 */
export { NUMBER_SETTINGS, rangeMessage, type NumberSettingName } from '../model/setting-ranges.js';
import { InputError } from '../errors.js';
import { NUMBER_SETTINGS, rangeMessage, type NumberSettingName } from '../model/setting-ranges.js';
import { anodeWavelength, parseWavelength, type Wavelength } from '../model/wavelengths.js';
import { SCHERRER_K_PRESETS } from '../size/scherrer.js';
import { RADIATION_SOURCES, type RadiationSource } from '../match/satellites.js';
import { BREADTH_KINDS, CORRECTION_KINDS, type BreadthKind, type CorrectionKind } from '../size/voigt.js';

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

const presetIds: readonly string[] = SCHERRER_K_PRESETS.map((p) => p.id);
const kMessage = `${rangeMessage('scherrerK')}, or one of ${presetIds.join(', ')}`;

/** Settings as they arrive from a flag, a form or a file: every field optional, names as above. */
export type AnalysisSettingsInput = {
  [K in keyof AnalysisSettings]?: (K extends 'wavelength' ? string : K extends 'k' ? number | string : AnalysisSettings[K]) | (null extends AnalysisSettings[K] ? null : never);
};

/** One field's check: its accepted value (text trimmed, a preset name lower-cased) or the sentence for the user. */
type FieldCheck = (value: unknown) => { value: unknown } | { message: string };

/** What a value is, in the words of the messages ("received number"). */
function kindOf(value: unknown): string {
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'array';
  if (typeof value === 'number' && Number.isNaN(value)) return 'NaN';
  return typeof value;
}

/** A finite number within the setting table's range (whole with `whole`), with the table's sentence as its error. */
function settingNumberCheck(name: NumberSettingName, { nullable = false, whole = false } = {}): FieldCheck {
  const { min, max } = NUMBER_SETTINGS[name];
  return (value) => {
    if (value === null && nullable) return { value };
    const ok = typeof value === 'number' && Number.isFinite(value) && value >= min && value <= max && (!whole || Number.isInteger(value));
    return ok ? { value } : { message: rangeMessage(name) };
  };
}

/** A name or symbol: text, trimmed, 1 to `maxLength` characters; null for none. */
function textCheck(maxLength: number): FieldCheck {
  return (value) => {
    if (value === null) return { value };
    if (typeof value !== 'string') return { message: `Invalid input: expected string, received ${kindOf(value)}` };
    const text = value.trim();
    if (text.length < 1) return { message: 'Too small: expected string to have >=1 characters' };
    if (text.length > maxLength) return { message: `Too big: expected string to have <=${maxLength} characters` };
    return { value: text };
  };
}

function oneOfCheck(choices: readonly string[], message: string): FieldCheck {
  return (value) => (typeof value === 'string' && choices.includes(value) ? { value } : { message });
}

/** Scherrer K: a number within the table's range, or a preset's name (any case, spaces around allowed). */
const kCheck: FieldCheck = (value) => {
  if (typeof value === 'string') {
    const id = value.trim().toLowerCase();
    return presetIds.includes(id) ? { value: id } : { message: 'Invalid input' };
  }
  if (typeof value === 'number' && Number.isFinite(value)) return settingNumberCheck('scherrerK')(value);
  return { message: kMessage };
};

/** Every setting's check, in the order the fields are checked (the first failure is the one reported). */
const FIELD_CHECKS: Record<keyof AnalysisSettings, FieldCheck> = {
  wavelength: textCheck(20),
  toleranceDeg: settingNumberCheck('toleranceDeg'),
  toleranceDAngstrom: settingNumberCheck('toleranceDAngstrom', { nullable: true }),
  toleranceFwhm: settingNumberCheck('toleranceFwhm', { nullable: true }),
  phaseLimit: settingNumberCheck('phaseLimit', { whole: true }),
  goniometerRadiusMm: settingNumberCheck('goniometerRadiusMm'),
  cellBoundPercent: settingNumberCheck('cellBoundPercent'),
  internalStandard: textCheck(200),
  internalStandardPercent: settingNumberCheck('internalStandardPercent', { nullable: true }),
  zeroFromInstrument: (value) => (typeof value === 'boolean' ? { value } : { message: 'zeroFromInstrument must be true or false' }),
  k: kCheck,
  breadth: oneOfCheck(BREADTH_KINDS, `breadth must be ${BREADTH_KINDS.join(' or ')}`),
  correction: oneOfCheck(CORRECTION_KINDS, `correction must be ${CORRECTION_KINDS.join(', ')}`),
  target: textCheck(200),
  backgroundHalfWidthDeg: settingNumberCheck('backgroundHalfWidthDeg', { nullable: true }),
  thresholdSigma: settingNumberCheck('thresholdSigma'),
  sizePhase: textCheck(200),
  source: oneOfCheck(RADIATION_SOURCES, `the radiation source must be one of ${RADIATION_SOURCES.join(', ')}`),
};

/**
 * The given fields, checked (an absent or undefined field is left out), or the first failure with the
 * field it concerns. Plain checks rather than a schema library, so that a one-file command does not
 * load one (issue 15: start-up).
 */
function checkSettingsInput(input: unknown): { data: Partial<Record<keyof AnalysisSettings, unknown>> } | { field: keyof AnalysisSettings | null; message: string } {
  if (typeof input !== 'object' || input === null || Array.isArray(input)) return { field: null, message: `Invalid input: expected object, received ${kindOf(input)}` };
  const given = input as Record<string, unknown>;
  const data: Partial<Record<keyof AnalysisSettings, unknown>> = {};
  for (const [field, check] of Object.entries(FIELD_CHECKS) as [keyof AnalysisSettings, FieldCheck][]) {
    if (given[field] === undefined) continue;
    const checked = check(given[field]);
    if ('message' in checked) return { field, message: checked.message };
    data[field] = checked.value;
  }
  const unknown = Object.keys(given).filter((key) => !Object.hasOwn(FIELD_CHECKS, key));
  if (unknown.length > 0) return { field: null, message: `Unrecognized key${unknown.length > 1 ? 's' : ''}: ${unknown.map((key) => JSON.stringify(key)).join(', ')}` };
  return { data };
}

/**
 * Check settings and fill in the defaults. `names` says what each field is called where the user gave
 * it (a flag such as "--tolerance"), so the message points at the thing they typed.
 */
export function resolveAnalysisSettings(input: unknown, names: Partial<Record<keyof AnalysisSettings, string>> = {}): AnalysisSettings {
  const checked = checkSettingsInput(input);
  if ('message' in checked) {
    const where = checked.field !== null && names[checked.field] ? `${names[checked.field]}: ` : '';
    throw new InputError(`${where}${checked.message}`);
  }
  const { wavelength, ...rest } = checked.data as Partial<AnalysisSettings> & { wavelength?: string | null };
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
