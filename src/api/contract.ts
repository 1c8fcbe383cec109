import { z } from 'zod';
import type { MatchResult, Verdict } from '../core/match/types.js';
export type { MatchResult, PhaseMatch, Verdict } from '../core/match/types.js';
import type { StoredReference } from '../core/model/reference.js';
import { NUMBER_SETTINGS, rangeMessage, type NumberSettingName } from '../core/analysis/settings.js';
import { PAPER_SIZES, type PaperSize } from '../core/report/report.js';

/**
 * The one API of the app: every method's input schema (checked at runtime wherever a call crosses
 * a process boundary) and its result type. The shell, the browser host and the screens all use it.
 */

/** Control characters (NUL, escape sequences) have no place in a name a chemist types or a file name. */
const hasNoControls = (text: string): boolean => !/[\u0000-\u001f\u007f-\u009f]/.test(text);
const name = z.string().trim().min(1, 'a name is needed').max(200).refine(hasNoControls, 'a name cannot hold control characters (such as NUL)');
/** A file's name as the user's system gave it (only shown and stored, never used as a path). */
const fileName = z.string().min(1, 'a file name is needed').max(300).refine(hasNoControls, 'a file name cannot hold control characters (such as NUL)');
const finite = z.number().finite();
/** A temperature in °C, at or above absolute zero. */
const celsius = finite.min(-273.15);

/** A number within the settings table's range (core/model/setting-ranges.ts), with the table's sentence as its error. */
function settingNumber(name: NumberSettingName): z.ZodNumber {
  const s = NUMBER_SETTINGS[name];
  const error = rangeMessage(name);
  return z.number({ error }).finite({ error }).min(s.min, { error }).max(s.max, { error });
}
const base64 = z.string().max(90_000_000).regex(/^[A-Za-z0-9+/=\r\n]*$/, 'file bytes must be base64');
/** The page's name for one file in progress (it names it before the bytes arrive, so Cancel can name it too). */
const jobId = z.string().regex(/^[A-Za-z0-9-]{1,64}$/, 'not a file-in-progress id');

export const settingsSchema = z
  .object({
    /** Anode symbol (Cu, Co, Fe, Cr, Mo, Ag) or a wavelength in Å. */
    wavelength: z.string().trim().min(1).max(20),
    toleranceDeg: settingNumber('toleranceDeg'),
    scherrerK: settingNumber('scherrerK'),
    breadth: z.enum(['fwhm', 'integral']),
    correction: z.enum(['voigt', 'lorentzian', 'gaussian']),
    /**
     * Background: SNIP clipping half-width, degrees 2θ (wider follows less of the peaks); null for
     * automatic (1° widened to the broad peaks found).
     */
    backgroundHalfWidthDeg: settingNumber('backgroundHalfWidthDeg').nullable(),
    /** Phase the chemist expects, by library name; null for none. */
    target: z.string().max(200).nullable(),
    /**
     * A reference spiked into every sample at internalStandardPercent (wt % of the spiked sample), for
     * absolute weight fractions and the amorphous content (Chung 1974); null for none. Older project files lack them.
     */
    internalStandard: z.string().max(200).nullable().default(null),
    internalStandardPercent: settingNumber('internalStandardPercent').nullable().default(null),
  })
  .strict();

export type ProjectSettings = z.infer<typeof settingsSchema>;

export const DEFAULT_SETTINGS: ProjectSettings = {
  wavelength: 'Cu',
  toleranceDeg: 0.1,
  scherrerK: 0.9,
  breadth: 'fwhm',
  correction: 'voigt',
  backgroundHalfWidthDeg: null,
  target: null,
  internalStandard: null,
  internalStandardPercent: null,
};

const hkl = z.tuple([z.number().int(), z.number().int(), z.number().int()]);
const cellSchema = z
  .object({ a: finite.positive(), b: finite.positive(), c: finite.positive(), alpha: finite.gt(0).lt(180), beta: finite.gt(0).lt(180), gamma: finite.gt(0).lt(180), spaceGroup: z.string().max(40).optional() })
  .strict();

export const referenceSchema = z
  .object({
    name,
    formula: z.string().trim().max(200),
    tags: z.array(z.string().trim().min(1).max(60)).max(20),
    source: z.string().trim().min(1, 'say where the values come from').max(2000),
    notes: z.string().max(5000).optional(),
    rir: finite.positive().nullable().optional(),
    cell: cellSchema.nullable().optional(),
    intensityBasis: z.string().max(300).optional(),
    lines: z.array(z.object({ d: finite.positive(), intensity: finite.min(0).max(100).nullable(), hkl: hkl.optional(), multiplicity: z.number().int().positive().optional() }).strict()).max(5000),
  })
  .strict();

export const apiSchemas = {
  'app.info': z.object({}).strict(),
  /** Read the app's own settings, or change those given. */
  'app.preferences': z.object({ paper: z.enum(PAPER_SIZES).optional() }).strict(),
  'project.list': z.object({}).strict(),
  'project.create': z.object({ name, target: z.string().max(200).nullable().optional() }).strict(),
  'project.rename': z.object({ name }).strict(),
  'project.delete': z.object({ id: z.string().regex(/^[a-z0-9-]{1,80}$/, 'not a project id') }).strict(),
  'project.open': z.object({ id: z.string().regex(/^[a-z0-9-]{1,80}$/, 'not a project id') }).strict(),
  'project.demo': z.object({}).strict(),
  'project.demoSample': z.object({ index: z.number().int().min(0).max(100) }).strict(),
  'project.state': z.object({}).strict(),
  'project.settings': z.object({ settings: settingsSchema.partial() }).strict(),
  'sample.add': z.object({ fileName, bytesBase64: base64, variant: z.string().max(100).optional(), hours: finite.min(0).optional(), temperature: celsius.optional() }).strict(),
  /** A file in progress: its bytes as they came (a binary request body, or bytes over the desktop bridge) or as base64. */
  'sample.stage': z
    .object({ jobId, fileName, bytes: z.instanceof(Uint8Array).optional(), bytesBase64: base64.optional() })
    .strict()
    .refine((input) => (input.bytes === undefined) !== (input.bytesBase64 === undefined), 'send the file bytes once, as bytes or as base64'),
  'sample.commit': z.object({ jobId, variant: z.string().max(100).optional(), hours: finite.min(0).optional(), temperature: celsius.optional() }).strict(),
  'sample.cancel': z.object({ jobId }).strict(),
  'sample.progress': z.object({ jobId }).strict(),
  'sample.get': z.object({ id: z.number().int().positive() }).strict(),
  'sample.label': z
    .object({ id: z.number().int().positive(), variant: z.string().max(100).nullable(), hours: finite.min(0).nullable(), temperature: celsius.nullable().optional(), name: name.nullable().optional() })
    .strict(),
  'sample.remove': z.object({ id: z.number().int().positive() }).strict(),
  'sample.reanalyze': z.object({ id: z.number().int().positive() }).strict(),
  'library.list': z.object({ search: z.string().max(200).optional(), tag: z.string().max(60).optional() }).strict(),
  'library.get': z.object({ name, version: z.number().int().positive().optional() }).strict(),
  'library.history': z.object({ name }).strict(),
  'library.save': z.object({ reference: referenceSchema }).strict(),
  'library.import': z.object({ fileName, text: z.string().max(50_000_000) }).strict(),
  'library.fromCell': z.object({ name, formula: z.string().max(200), cell: cellSchema, tags: z.array(z.string().max(60)).max(20), source: z.string().min(1).max(2000) }).strict(),
  'library.remove': z.object({ name }).strict(),
  'library.restore': z.object({ name, version: z.number().int().positive() }).strict(),
  'library.lines': z.object({ names: z.array(name).max(50) }).strict(),
  'instrument.fit': z.object({ sampleId: z.number().int().positive(), standard: name }).strict(),
  'instrument.save': z.object({ sampleId: z.number().int().positive(), standard: name }).strict(),
  'instrument.clear': z.object({}).strict(),
  'series.get': z.object({ by: z.enum(['variant', 'time', 'temperature']) }).strict(),
  'report.build': z.object({ format: z.enum(['html', 'csv']) }).strict(),
  'report.pdf': z.object({}).strict(),
} as const;

export type ApiMethod = keyof typeof apiSchemas;
export type ApiInput<M extends ApiMethod> = z.input<(typeof apiSchemas)[M]>;
export type ApiParsed<M extends ApiMethod> = z.output<(typeof apiSchemas)[M]>;

export interface ProjectSummary {
  id: string;
  name: string;
  modified: string;
  demo: boolean;
}

/** One sample's verdict at a glance. */
export type { SampleVerdict } from '../core/analysis/verdict.js';
import type { SampleVerdict } from '../core/analysis/verdict.js';

export interface SampleSummary {
  id: number;
  name: string;
  fileName: string;
  variant: string | null;
  hours: number | null;
  /** Temperature in °C (annealing, drying...). */
  temperature: number | null;
  simulated: boolean;
  verdict: SampleVerdict;
  /** The best phase and its verdict (the target's when one is set). */
  phase: { name: string; verdict: Verdict; score: number } | null;
  lowAngleCount: number;
  unexplainedCount: number;
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  /** How the size was had: the Scherrer mean of resolved peaks, or a constrained group fit where every line was overlapped. */
  sizeMethod?: 'scherrer' | 'constrained-group-fit' | null;
  /** Sentence when the analysis failed (the raw file is still kept). */
  problem: string | null;
  analysisMs: number | null;
  /** True when the settings, the instrument profile or the library changed since this result was saved. */
  stale: boolean;
  /** What changed, as a sentence; null when the result is current. */
  staleReason: string | null;
}

/** A sample just added: its summary, and the samples already holding the very same file (same SHA-256). */
export interface AddedSample extends SampleSummary {
  duplicateOf: Array<{ id: number; name: string }>;
}

export interface SizePeakView {
  twoTheta: number;
  hkl: [number, number, number] | null;
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  limit: 'instrument' | 'overlap' | null;
  /** Observed breadth, the instrument's at this angle (null without a profile) and the sample's own (instrument removed), degrees 2θ, of the kind the sizes use. */
  observedBreadthDeg: number;
  instrumentBreadthDeg: number | null;
  sampleBreadthDeg: number;
  /** The size or its limit in words, as the command line prints it ("larger than 180 nm (breadth within 20 % of the instrument's)"). */
  statement: string;
}

export interface SizeStrainView {
  method: string;
  convention: string;
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  strain: number;
  strainSigma: number;
  strainDetected: boolean;
  statement: string;
  r2: number;
  reflections: number;
  /** The plot: y = (β* / d*)² against x = β* / d*², with the fitted line y = slope·x + intercept. */
  points: Array<{ twoTheta: number; x: number; y: number; sigmaY: number }>;
  slope: number;
  intercept: number;
}

export interface SizeView {
  k: number;
  breadth: 'fwhm' | 'integral';
  correction: string;
  phase: string | null;
  instrumentCorrected: boolean;
  peaks: SizePeakView[];
  scherrer: { sizeNm: number; sizeSigmaNm: number } | null;
  /** Where every line was overlapped: the constrained group fit's size, with its sentence and convention. */
  groupFit?: { sizeNm: number; sizeSigmaNm: number; statement: string; convention: string } | null;
  groupFitReason?: string | null;
  williamsonHall: { sizeNm: number | null; strain: number; strainDetected: boolean; strainStatement: string; r2: number } | null;
  /** The size–strain result to quote (Halder–Wagner), with its plot; null with the reason when it is no result. */
  sizeStrain: SizeStrainView | null;
  sizeStrainReason: string | null;
  notes: string[];
}

export interface PeakView {
  /** The peak's index in the analysis's peak list (what matched lines and unexplained peaks refer to). */
  index: number;
  twoTheta: number;
  twoThetaSigma: number;
  d: number;
  height: number;
  area: number;
  fwhm: number;
  integralBreadth: number;
  eta: number;
  /** Phase that explains it, or null. */
  phase: string | null;
  lowAngle: boolean;
  /** Explained by no phase judged present. */
  unexplained: boolean;
}

/**
 * A file in progress as soon as it is read, to draw while it is analysed: its points reduced to the
 * first, lowest, highest and last of each of a few thousand 2θ columns (x, y as base64 Float32).
 */
export interface PatternPreview {
  jobId: string;
  name: string;
  points: number;
  lambda1: number;
  wavelengthLabel: string;
  x: string;
  y: string;
}

/** Numeric arrays travel as base64 of little-endian Float32 (display precision), decoded by the screens. */
export interface SampleDetail extends SampleSummary {
  wavelengthLabel: string;
  lambda1: number;
  points: number;
  x: string;
  y: string;
  background: string | null;
  model: string | null;
  peaks: PeakView[];
  /** Peaks below the target's first line: unexplained ones, and those of other phases found present. */
  lowAnglePeaks: Array<{ peakIndex: number; twoTheta: number; d: number; phase: string | null }>;
  match: MatchResult | null;
  size: SizeView | null;
  /** Crystalline share of the scattering above the baseline, without a standard (null when not formed or saved before it existed). */
  crystallinity: { percent: number; statement: string } | null;
  readerNotes: string[];
  meta: Record<string, string>;
  sha256: string;
}

export interface InstrumentView {
  standard: string;
  sampleName: string;
  u: number;
  v: number;
  w: number;
  points: Array<{ twoTheta: number; fwhm: number; fwhmSigma: number; used: boolean }>;
  /** FWHM(2θ) of the fitted Caglioti curve, for drawing. */
  curve: Array<{ twoTheta: number; fwhm: number }>;
  notes: string[];
}

export interface ProjectState {
  project: ProjectSummary;
  settings: ProjectSettings;
  samples: SampleSummary[];
  instrument: InstrumentView | null;
  /** For the demo project: what the patterns were simulated from. */
  truth: string | null;
}

export interface AppInfo {
  version: string;
  mode: 'electron' | 'browser';
  dataDir: string;
  firstRun: boolean;
  libraryCount: number;
  projects: ProjectSummary[];
  current: ProjectState | null;
  pdfAvailable: boolean;
  preferences: AppPreferences;
}

/** The app's own settings, kept in the app-data folder beside the projects (not in a project). */
export interface AppPreferences {
  /** Paper size of printed and PDF reports (default A4). */
  paper: PaperSize;
}

export interface ReferenceSummary {
  name: string;
  formula: string;
  tags: string[];
  version: number;
  lines: number;
  source: string;
  createdAt: string;
}

export interface ReferenceLinesView {
  name: string;
  version: number;
  lines: Array<{ twoTheta: number; d: number; intensity: number | null; hkl: [number, number, number] | null }>;
}

export interface SeriesRowView {
  sampleId: number;
  name: string;
  label: string;
  hours: number | null;
  temperature: number | null;
  verdict: SampleVerdict;
  lowAngleCount: number;
  impurityShare: number | null;
  /** Other phases found present, with their shares ("MAPbI3·H2O 33 %"). */
  otherPhases: string;
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  sizeMethod?: 'scherrer' | 'constrained-group-fit' | null;
  /** Why there is no size (or only a bound), in a few words; null when there is one. */
  sizeNote: string | null;
}

export interface GrowthView {
  phase: string;
  basis: string;
  points: Array<{ hours: number; share: number }>;
  /** The fitted curve, when the data support one. */
  curve: Array<{ hours: number; share: number }>;
  statement: string;
}

export interface SeriesView {
  by: 'variant' | 'time' | 'temperature';
  rows: SeriesRowView[];
  comparisons: Array<{ a: string; b: string; differs: boolean; test: string; detail: string }>;
  growth: GrowthView[];
  notes: string[];
}

export interface ExportedFile {
  fileName: string;
  text?: string;
  bytesBase64?: string;
}

export interface ApiResults {
  'app.info': AppInfo;
  'app.preferences': AppPreferences;
  'project.list': ProjectSummary[];
  'project.create': ProjectState;
  'project.rename': ProjectState;
  'project.delete': { deleted: string; keptAt: string; projects: ProjectSummary[] };
  'project.open': ProjectState;
  /** `pending`: the demo samples still to add (none when the existing demo project was reopened complete). */
  'project.demo': { state: ProjectState; steps: number; pending: number[]; reopened: boolean };
  'project.demoSample': SampleSummary;
  'project.state': ProjectState;
  'project.settings': ProjectState;
  'sample.add': AddedSample;
  'sample.stage': PatternPreview;
  'sample.commit': AddedSample;
  /** `cancelled`: false when the file was already finished (then it was added) or never started. */
  'sample.cancel': { cancelled: boolean };
  /** Where a file in progress is; null when the engine has not got it (its bytes still on the way) or no longer holds it. */
  'sample.progress': { stage: 'waiting' | 'reading' | 'analysing' | 'analysed' | null };
  'sample.get': SampleDetail;
  'sample.label': SampleSummary;
  'sample.remove': ProjectState;
  'sample.reanalyze': SampleSummary;
  'library.list': ReferenceSummary[];
  'library.get': StoredReference;
  'library.history': Array<{ version: number; createdAt: string; lines: number; source: string }>;
  'library.save': StoredReference;
  'library.import': { imported: string[]; updated: string[] };
  'library.fromCell': StoredReference;
  'library.remove': { removed: string };
  'library.restore': StoredReference;
  'library.lines': ReferenceLinesView[];
  'instrument.fit': InstrumentView;
  'instrument.save': ProjectState;
  'instrument.clear': ProjectState;
  'series.get': SeriesView;
  'report.build': ExportedFile;
  'report.pdf': ExportedFile;
}
