import type { Command } from 'commander';
import { readPatternFile } from '../../node/files.js';
import { searchPeaks } from '../../core/analysis/search.js';
import { effectiveWavelength } from '../../core/analysis/settings.js';
import type { FittedPeak } from '../../core/model/peak.js';
import { BACKGROUND_OPTION_HELP, runCommand } from '../common/run-command.js';
import { settingsFromFlags } from '../common/settings-flags.js';

export interface PeaksCommandOptions {
  wavelength?: string;
  threshold?: string;
  background?: string;
  json?: boolean;
}

/** The JSON of `crystallog peaks` (field names fixed by the command contract; extra fields welcome). */
/** Every field of a fitted peak except the optional extras (Gaussian/Lorentzian parts, asymmetry). */
type ReportedPeak = Pick<
  FittedPeak,
  | 'twoTheta' | 'twoThetaSigma' | 'd' | 'height' | 'heightSigma' | 'area' | 'areaSigma' | 'fwhm' | 'fwhmSigma'
  | 'integralBreadth' | 'integralBreadthSigma' | 'eta' | 'etaSigma' | 'group' | 'groupChi2' | 'overlapped'
>;

export interface PeaksReport {
  file: string;
  points: number;
  wavelength: { lambda1: number; lambda2: number | null; ratio: number; label: string; source: 'option' | 'file' | 'default' };
  thresholdSigma: number;
  /** The contract's fields of each fitted peak, rounded for print. */
  peaks: ReportedPeak[];
  notes: string[];
}

/** `crystallog peaks FILE [--wavelength W] [--threshold SIGMA] [--background-width DEG] [--json]` */
export function registerPeaks(program: Command): void {
  program
    .command('peaks')
    .description('Find and fit the peaks of one pattern (Kα1 positions; the Kα2 partner is part of each peak).')
    .argument('<file>', 'pattern file (xy text, CSV or pdCIF)')
    .option('--wavelength <w>', 'Cu, Co, Fe, Cr, Mo, Ag or a number in Å (default: from the file, else Cu)')
    .option('--threshold <sigma>', 'a peak must stand this many σ above the background (default 3)')
    .option('--background <deg>', BACKGROUND_OPTION_HELP)
    .option('--json', 'print one JSON document')
    .action(async (file: string, options: PeaksCommandOptions) => {
      await runCommand(options.json === true, () => peaksReport(file, options), peaksText, file);
    });
}

/** The peak part of the analysis: the same search, with the same settings, that `analyze` runs. */
export function peaksReport(file: string, options: PeaksCommandOptions): PeaksReport {
  const settings = settingsFromFlags(options);
  const pattern = readPatternFile(file);
  const wavelength = effectiveWavelength(settings, pattern.wavelength);
  const source: PeaksReport['wavelength']['source'] = settings.wavelength ? 'option' : pattern.wavelength ? 'file' : 'default';
  const { thresholdSigma } = settings;
  const result = searchPeaks(pattern, settings, wavelength);
  const notes = [...pattern.readerNotes];
  if (result.noise.note) notes.push(result.noise.note);
  if (source === 'default') notes.push('no wavelength in the file or on the command line: Cu Kα1/Kα2 assumed');
  if (result.peaks.length === 0) notes.push('no peak stands clear of the noise: a featureless pattern supports no phase claim');
  return {
    file,
    points: result.points,
    wavelength: { lambda1: wavelength.lambda1, lambda2: wavelength.lambda2, ratio: wavelength.ratio, label: wavelength.label, source },
    thresholdSigma,
    peaks: result.peaks.map(peakFields),
    notes,
  };
}

function peakFields(p: FittedPeak): ReportedPeak {
  return {
    twoTheta: round(p.twoTheta, 5),
    twoThetaSigma: round(p.twoThetaSigma, 5),
    d: round(p.d, 5),
    height: round(p.height, 1),
    heightSigma: round(p.heightSigma, 1),
    area: round(p.area, 3),
    areaSigma: round(p.areaSigma, 3),
    fwhm: round(p.fwhm, 5),
    fwhmSigma: round(p.fwhmSigma, 5),
    integralBreadth: round(p.integralBreadth, 5),
    integralBreadthSigma: round(p.integralBreadthSigma, 5),
    eta: round(p.eta, 3),
    etaSigma: round(p.etaSigma, 3),
    group: p.group,
    groupChi2: round(p.groupChi2, 3),
    overlapped: p.overlapped,
  };
}

/** Round to `digits` decimals, keeping at least 2 significant figures for tiny values (uncertainties). */
function round(value: number, digits: number): number {
  if (!Number.isFinite(value)) return value;
  const magnitude = value === 0 ? 0 : Math.floor(Math.log10(Math.abs(value)));
  const places = Math.max(digits, 1 - magnitude);
  return Number(value.toFixed(Math.min(places, 12)));
}

function peaksText(report: PeaksReport): string {
  const lines = [
    `${report.file}: ${report.points} points, ${report.wavelength.label} (λ1 ${report.wavelength.lambda1} Å${report.wavelength.lambda2 === null ? '' : `, λ2 ${report.wavelength.lambda2} Å, ratio ${report.wavelength.ratio}`})`,
    `${report.peaks.length} peak${report.peaks.length === 1 ? '' : 's'} at least ${report.thresholdSigma}σ above the background (Kα1 positions)`,
  ];
  if (report.peaks.length > 0) {
    const headers = ['2θ (°)', '± (°)', 'd (Å)', 'height', 'area', 'FWHM (°)', 'breadth (°)', 'η'];
    const width = 11;
    lines.push('');
    lines.push(headers.map((h) => h.padStart(width)).join(' '));
    for (const p of report.peaks) {
      const cells = [p.twoTheta.toFixed(4), p.twoThetaSigma.toFixed(4), p.d.toFixed(4), p.height.toFixed(1), p.area.toFixed(2), p.fwhm.toFixed(4), p.integralBreadth.toFixed(4), p.eta.toFixed(2)];
      lines.push(cells.map((c) => c.padStart(width)).join(' ') + (p.overlapped ? '  overlapped' : ''));
    }
    lines.push('breadth = integral breadth (area / height)');
  }
  for (const note of report.notes) lines.push(`note: ${note}`);
  return lines.join('\n') + '\n';
}
