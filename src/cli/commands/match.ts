import type { Command } from 'commander';
import { analyzePattern, createAnalysisContext } from '../../core/analysis/analyse.js';
import type { MatchResult } from '../../core/match/types.js';
import { readPatternFile } from '../../node/files.js';
import { printWarnings, withReferencesWithIndex } from '../common/io.js';
import { runCommand } from '../common/run-command.js';
import { addMatchFlags, settingsFromFlags, TOLERANCE_HELP, type AnalysisFlags } from '../common/settings-flags.js';
import { loadInstrument } from './analyze.js';

interface MatchCommandOptions extends AnalysisFlags {
  library: string;
  instrument?: string;
  json?: boolean;
}

export interface MatchCommandResult extends MatchResult {
  file: string;
  wavelength: { label: string; lambda1: number; lambda2: number | null; ratio: number };
  library: string;
  references: number;
}

/** `crystallog match FILE --library DB [--target NAME] [--tolerance DEG] [--wavelength W] [--json]` */
export function registerMatch(program: Command): void {
  const command = program
    .command('match')
    .description('Which reference phases explain a pattern: verdicts with reasons, shift, unexplained peaks, weight fractions.')
    .argument('<file>', 'pattern file (xy text, CSV or pdCIF)')
    .requiredOption('--library <db>', 'reference library file')
    .option('--target <name>', 'the phase you expect (explains the pattern first)')
    .option('--tolerance <deg>', TOLERANCE_HELP)
    .option('--source <kind>', 'the beam: ni-filter (default), no-filter, monochromator or synchrotron (which Kβ and W Lα satellites to expect)')
    .option('--wavelength <w>', 'Cu, Co, Fe, Cr, Mo, Ag or a number in Å (default: from the file, else Cu)')
    .option('--instrument <profile>', "instrument profile JSON from \"crystallog instrument\" (its zero offset is held; its FWHM sets --tolerance-fwhm)")
    .option('--json', 'print the result as JSON');
  addMatchFlags(command).action((file: string, o: MatchCommandOptions) => runCommand(Boolean(o.json), () => matchCommand(file, o), matchText, file));
}

/** The match part of the one analysis of the pattern (peaks → match → sizes), as `analyze` gives it. */
function matchCommand(file: string, o: MatchCommandOptions): MatchCommandResult {
  const settings = settingsFromFlags(o);
  const instrument = o.instrument ? loadInstrument(o.instrument) : null;
  const pattern = readPatternFile(file);
  // One pattern looks at the lines of a few hundred references: those are read from the library as needed.
  const { analysis, references } = withReferencesWithIndex(
    o.library,
    ({ references, index }) => ({ analysis: analyzePattern(pattern, createAnalysisContext(references, instrument, settings, index)), references: references.length }),
    { linesOnDemand: true },
  );
  printWarnings(analysis.warnings);
  const { wavelength } = analysis;
  return {
    file,
    wavelength: { label: wavelength.label, lambda1: wavelength.lambda1, lambda2: wavelength.lambda2, ratio: wavelength.ratio },
    library: o.library,
    references,
    ...analysis.match,
  };
}

function matchText(r: MatchCommandResult): string {
  const tolerance = r.tolerance ? `${r.tolerance.description}; median half-window ${r.tolerance.medianWindowDeg}° here` : `${r.toleranceDeg}° 2θ`;
  const out: string[] = [`${r.file}: matched against ${r.references} references (tolerance ${tolerance}, ${r.wavelength.label})`];
  const sigma = (v: number | null): string => (v === null ? '' : ` ± ${v.toFixed(4)}`);
  out.push(
    `shift (one for the sample): zero ${r.shift.zeroDeg.toFixed(4)}${sigma(r.shift.zeroSigmaDeg)}°, displacement ${r.shift.displacementCosDeg.toFixed(4)}${sigma(r.shift.displacementSigmaDeg)}°·cosθ ` +
      `(${r.shift.displacementMm.toFixed(3)} mm on a ${r.shift.goniometerRadiusMm} mm goniometer)`,
  );
  if (r.amorphous) out.push(`amorphous (and unidentified) content: ${(100 * r.amorphous.fraction).toFixed(1)} ± ${(100 * r.amorphous.sigma).toFixed(1)} wt % of the unspiked sample`);
  for (const p of r.phases) {
    const fraction = p.weightFraction === null ? 'not quantified' : `${(100 * p.weightFraction).toFixed(1)} wt %`;
    // cellChangePercent is the refined cell's volume change from the reference, % (one number for every crystal system).
    const cell = p.cell ? `, cell a ${p.cell.a.toFixed(5)}(${p.cell.aSigma.toExponential(1)}) Å, volume ${p.cellChangePercent! >= 0 ? '+' : ''}${p.cellChangePercent!.toFixed(3)} %` : '';
    out.push(`  ${p.verdict.padEnd(9)} ${p.name}  score ${p.score.toFixed(2)}, ${p.matchedLines} lines, ${fraction}${cell}`);
    for (const reason of p.reasons) out.push(`      - ${reason}`);
  }
  if (r.unexplained.length > 0) {
    out.push('unexplained peaks:');
    for (const u of r.unexplained) out.push(`  2θ ${u.twoTheta.toFixed(3)}°  d ${u.d.toFixed(4)} Å  height ${u.height.toFixed(1)}${u.lowAngle ? '  low-angle' : ''}${u.possibleSources.length ? `  (fits ${u.possibleSources.join(', ')})` : ''}`);
  }
  for (const reason of r.reasons) out.push(reason);
  return out.join('\n') + '\n';
}
