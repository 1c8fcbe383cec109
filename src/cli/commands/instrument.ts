import type { Command } from 'commander';
import { existsSync, readFileSync } from 'node:fs';
import { InputError } from '../../core/errors.js';
import { ReferenceLibrary } from '../../node/library/store.js';
import { readPatternFile } from '../../node/files.js';
import { fitInstrumentFromStandard } from '../../core/analysis/instrument.js';
import { instrumentProfileToJson, parseInstrumentProfile, type InstrumentProfile } from '../../core/size/instrument.js';
import { printWarnings, withLibrary, writeFileAtomically } from '../common/io.js';
import { runCommand } from '../common/run-command.js';
import { settingsFromFlags } from '../common/settings-flags.js';

interface InstrumentCommandOptions {
  standard: string;
  library: string;
  out: string;
  name?: string;
  date?: string;
  wavelength?: string;
  tolerance?: string;
  json?: boolean;
}

export interface InstrumentCommandResult extends InstrumentProfile {
  file: string;
  out: string;
  /** Key under which the profile was also kept in the library. */
  libraryKey: string;
}

const LIBRARY_KEY_PREFIX = 'instrument profile: ';

/** `crystallog instrument STANDARD_FILE --standard NAME --library DB --out PROFILE.json [--json]` */
export function registerInstrument(program: Command): void {
  program
    .command('instrument')
    .description("Fit the instrument's peak widths (Caglioti U, V, W and η) from a measured line-profile standard and save them as a profile.")
    .argument('<standard-file>', 'pattern of the standard (xy text, CSV or pdCIF)')
    .requiredOption('--standard <name>', 'the standard in the library (LaB6, silicon, or a reference tagged "standard")')
    .requiredOption('--library <db>', 'reference library file')
    .requiredOption('--out <profile.json>', 'where to write the instrument profile')
    .option('--name <name>', 'name of the profile (default: the output file name)')
    .option('--date <iso-date>', 'date of the measurement (default: now)')
    .option('--wavelength <w>', 'Cu, Co, Fe, Cr, Mo, Ag or a number in Å (default: from the file, else Cu)')
    .option('--tolerance <deg>', 'line matching tolerance, degrees 2θ (default 0.1)')
    .option('--json', 'print the result as JSON')
    .action((file: string, o: InstrumentCommandOptions) => runCommand(Boolean(o.json), () => instrumentCommand(file, o), instrumentText, file));
}

export function instrumentCommand(file: string, o: InstrumentCommandOptions): InstrumentCommandResult {
  const settings = settingsFromFlags(o);
  if (o.date !== undefined && Number.isNaN(Date.parse(o.date))) throw new InputError(`option --date ${o.date}: give a date such as 2025-03-14`);
  const pattern = readPatternFile(file);
  return withLibrary(o.library, (library) => {
    const standard = library.findByNameOrFormula(o.standard);
    if (!standard) throw new InputError(`the standard "${o.standard}" is not in the library ${o.library}; import it first`);
    const name = o.name ?? o.out.replace(/^.*[\\/]/, '').replace(/\.json$/i, '');
    const profile = fitInstrumentFromStandard(pattern, standard, settings, {
      name,
      file,
      ...(o.date !== undefined ? { date: new Date(o.date).toISOString() } : {}),
    });
    writeFileAtomically(o.out, instrumentProfileToJson(profile));
    const libraryKey = LIBRARY_KEY_PREFIX + profile.name;
    library.setMeta(libraryKey, JSON.stringify(profile));
    printWarnings(profile.warnings);
    return { ...profile, file, out: o.out, libraryKey };
  }, 'write');
}

/**
 * An instrument profile from a JSON file, or, when no such file exists and a library is given, the
 * profile saved in the library under that name.
 */
export function loadInstrumentProfile(fileOrName: string, libraryPath?: string): InstrumentProfile {
  if (existsSync(fileOrName)) return parseInstrumentProfile(readFileSync(fileOrName, 'utf8'), fileOrName);
  if (libraryPath && existsSync(libraryPath)) {
    const library = ReferenceLibrary.open(libraryPath, { readOnly: true });
    try {
      const stored = library.getMeta(LIBRARY_KEY_PREFIX + fileOrName);
      if (stored !== undefined) return parseInstrumentProfile(stored, `${libraryPath} (profile "${fileOrName}")`);
    } finally {
      library.close();
    }
  }
  throw new InputError(`instrument profile ${fileOrName} is neither a file nor a profile saved in the library; make one with "crystallog instrument"`);
}

function instrumentText(r: InstrumentCommandResult): string {
  const out = [
    `instrument profile "${r.name}" (${r.date}) from ${r.standard.name} in ${r.file}, ${r.wavelength.label}`,
    `Caglioti: U = ${r.caglioti.u.toExponential(4)}, V = ${r.caglioti.v.toExponential(4)}, W = ${r.caglioti.w.toExponential(4)} (deg²)`,
    `η(2θ) coefficients: ${r.eta.map((c) => c.toExponential(4)).join(', ')}`,
    `${r.residuals.length} peaks, FWHM residual rms ${r.rms.toFixed(5)}° (${(100 * r.rmsRelative).toFixed(1)} %)`,
  ];
  for (const p of r.residuals) out.push(`  2θ ${p.twoTheta.toFixed(3)}°  ${p.hkl ? p.hkl.join(' ') : '     '}  FWHM ${p.fwhm.toFixed(4)} (fit ${p.fwhmFit.toFixed(4)})  η ${p.eta.toFixed(2)} (fit ${p.etaFit.toFixed(2)})`);
  for (const w of r.warnings) out.push(`warning: ${w}`);
  out.push(`written to ${r.out}`);
  return out.join('\n') + '\n';
}
