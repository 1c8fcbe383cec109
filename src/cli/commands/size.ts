import type { Command } from 'commander';
import { analyzePattern, createAnalysisContext } from '../../core/analysis/analyse.js';
import { InputError } from '../../core/errors.js';
import type { SizeResult } from '../../core/size/sizes.js';
import { readPatternFile } from '../../node/files.js';
import { loadAllReferences, printWarnings } from '../common/io.js';
import { runCommand } from '../common/run-command.js';
import { settingsFromFlags } from '../common/settings-flags.js';
import { loadInstrumentProfile } from './instrument.js';

export interface SizeCommandOptions {
  instrument?: string;
  phase?: string;
  target?: string;
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
    .option('--target <name>', 'the phase you expect: its lines give the size when it is found (needs --library)')
    .option('--library <db>', 'reference library file')
    .option('--k <k>', 'Scherrer K: a number or spheres, cubes, column-length, sphere-fwhm, sphere-integral (default 0.9)')
    .option('--breadth <kind>', 'fwhm or integral (default fwhm)')
    .option('--correction <kind>', 'voigt, lorentzian or gaussian (default voigt)')
    .option('--wavelength <w>', 'Cu, Co, Fe, Cr, Mo, Ag or a number in Å (default: from the file, else Cu)')
    .option('--tolerance <deg>', 'line matching tolerance, degrees 2θ (default 0.1)')
    .option('--json', 'print the result as JSON')
    .action((file: string, o: SizeCommandOptions) => runCommand(Boolean(o.json), () => sizeCommand(file, o), sizeText, file));
}

/** The size part of the one analysis of the pattern (peaks → match → sizes), as `analyze` gives it. */
export function sizeCommand(file: string, o: SizeCommandOptions): SizeCommandResult {
  if (o.phase !== undefined && o.library === undefined) throw new InputError('option --phase needs --library to find the phase\'s lines');
  const settings = settingsFromFlags(o);
  const instrument = o.instrument !== undefined ? loadInstrumentProfile(o.instrument, o.library) : null;
  const references = o.library !== undefined ? loadAllReferences(o.library) : [];
  const context = createAnalysisContext(references, instrument, settings);
  const analysis = analyzePattern(readPatternFile(file), context);
  printWarnings(analysis.warnings);
  return { file, ...analysis.size };
}

function sizeText(r: SizeCommandResult): string {
  const out = [`${r.file}: K = ${r.k}, breadth ${r.breadth}, correction ${r.correction}`];
  for (const p of r.peaks) out.push(`  2θ ${p.twoTheta.toFixed(3)}°  ${p.hkl ? p.hkl.join(' ').padEnd(8) : ''.padEnd(8)} ${p.statement}`);
  out.push(`Scherrer: ${r.scherrer.statement}`);
  out.push(`Size–strain (Halder–Wagner): ${r.sizeStrain ? `${r.sizeStrain.statement}, R² = ${r.sizeStrain.r2.toFixed(3)}` : `none: ${r.sizeStrainReason ?? 'not available'}`}`);
  out.push(`Williamson–Hall (Voigt parts): ${r.williamsonHall ? `${r.williamsonHall.statement}, R² = ${r.williamsonHall.r2.toFixed(3)}` : `none: ${r.williamsonHallReason ?? 'not available'}`}`);
  if (r.sizeStrain) out.push(`  convention: ${r.sizeStrain.convention}`);
  if (r.singleLine?.sizeNm) out.push(`Voigt single-line: size ${r.singleLine.sizeNm.toPrecision(3)} nm, microstrain ${r.singleLine.strain?.toExponential(2) ?? '—'}`);
  for (const w of r.warnings) out.push(`warning: ${w}`);
  for (const c of r.cautions) out.push(`note: ${c}`);
  return out.join('\n') + '\n';
}
