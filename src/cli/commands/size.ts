import type { Command } from 'commander';
import { InputError } from '../../core/errors.js';
import { readPatternFile } from '../../node/files.js';
import { findPeaks } from '../../core/process/peaks.js';
import { crystalliteSizes, type SizeResult } from '../../core/size/sizes.js';
import { BREADTH_KINDS, CORRECTION_KINDS, type BreadthKind, type CorrectionKind } from '../../core/size/voigt.js';
import { chooseWavelength, withLibrary } from '../common/io.js';
import { numberOption, runCommand } from '../common/run-command.js';
import { loadInstrumentProfile } from './instrument.js';

export interface SizeCommandOptions {
  instrument?: string;
  phase?: string;
  library?: string;
  k?: string;
  breadth?: string;
  correction?: string;
  wavelength?: string;
  tolerance?: string;
  json?: boolean;
}

export interface SizeCommandResult extends SizeResult {
  file: string;
}

/** `crystallog size FILE [--instrument P] [--phase NAME --library DB] [--k K] [--breadth fwhm|integral] [--correction voigt|lorentzian|gaussian] [--json]` */
export function registerSize(program: Command): void {
  program
    .command('size')
    .description('Crystallite sizes: Scherrer per peak after instrument correction, their mean, Williamson–Hall size and strain, and their limits.')
    .argument('<file>', 'pattern file (xy text, CSV or pdCIF)')
    .option('--instrument <profile>', 'instrument profile JSON from "crystallog instrument" (or its name in the library)')
    .option('--phase <name>', 'use only the lines of this phase (needs --library)')
    .option('--library <db>', 'reference library file')
    .option('--k <k>', 'Scherrer K: a number or spheres, cubes, column-length, sphere-fwhm, sphere-integral (default 0.9)')
    .option('--breadth <kind>', 'fwhm or integral (default fwhm)')
    .option('--correction <kind>', 'voigt, lorentzian or gaussian (default voigt)')
    .option('--wavelength <w>', 'Cu, Co, Fe, Cr, Mo, Ag or a number in Å (default: from the file, else Cu)')
    .option('--tolerance <deg>', 'line matching tolerance, degrees 2θ (default 0.1)')
    .option('--json', 'print the result as JSON')
    .action((file: string, o: SizeCommandOptions) => runCommand(Boolean(o.json), () => sizeCommand(file, o), sizeText));
}

export function parseBreadth(text: string | undefined): BreadthKind | undefined {
  if (text === undefined) return undefined;
  const v = text.toLowerCase() as BreadthKind;
  if (!BREADTH_KINDS.includes(v)) throw new InputError(`option --breadth ${text}: give fwhm or integral`);
  return v;
}

export function parseCorrection(text: string | undefined): CorrectionKind | undefined {
  if (text === undefined) return undefined;
  const v = text.toLowerCase() as CorrectionKind;
  if (!CORRECTION_KINDS.includes(v)) throw new InputError(`option --correction ${text}: give voigt, lorentzian or gaussian`);
  return v;
}

export function sizeCommand(file: string, o: SizeCommandOptions): SizeCommandResult {
  const toleranceDeg = numberOption('--tolerance', o.tolerance, (v) => v > 0 && v <= 1, 'give the tolerance in degrees 2θ, above 0 and at most 1');
  const breadth = parseBreadth(o.breadth);
  const correction = parseCorrection(o.correction);
  if (o.phase !== undefined && o.library === undefined) throw new InputError('option --phase needs --library to find the phase\'s lines');
  const instrument = o.instrument !== undefined ? loadInstrumentProfile(o.instrument, o.library) : null;
  let phase = null;
  if (o.phase !== undefined && o.library !== undefined) {
    phase = withLibrary(o.library, (library) => library.get(o.phase!));
    if (!phase) throw new InputError(`the phase "${o.phase}" is not in the library ${o.library}; check the name with "crystallog library list"`);
  }
  const pattern = readPatternFile(file);
  const wavelength = chooseWavelength(o.wavelength, pattern);
  const search = findPeaks(pattern, { wavelength });
  const result = crystalliteSizes(search.peaks, {
    wavelength,
    instrument,
    ...(o.k !== undefined ? { k: o.k } : {}),
    ...(breadth ? { breadth } : {}),
    ...(correction ? { correction } : {}),
    phase: phase ? { name: phase.name, version: phase.version, lines: phase.lines } : null,
    ...(toleranceDeg !== undefined ? { toleranceDeg } : {}),
  });
  for (const w of result.warnings) process.stderr.write(`crystallog: warning: ${w}\n`);
  return { file, ...result };
}

function sizeText(r: SizeCommandResult): string {
  const out = [`${r.file}: K = ${r.k}, breadth ${r.breadth}, correction ${r.correction}`];
  for (const p of r.peaks) out.push(`  2θ ${p.twoTheta.toFixed(3)}°  ${p.hkl ? p.hkl.join(' ').padEnd(8) : ''.padEnd(8)} ${p.statement}`);
  out.push(`Scherrer: ${r.scherrer.statement}`);
  out.push(`Williamson–Hall: ${r.williamsonHall ? `${r.williamsonHall.statement}, R² = ${r.williamsonHall.r2.toFixed(3)}` : 'not available'}`);
  if (r.singleLine?.sizeNm) out.push(`Voigt single-line: size ${r.singleLine.sizeNm.toPrecision(3)} nm, microstrain ${r.singleLine.strain?.toExponential(2) ?? '—'}`);
  for (const w of r.warnings) out.push(`warning: ${w}`);
  for (const c of r.cautions) out.push(`note: ${c}`);
  return out.join('\n') + '\n';
}
