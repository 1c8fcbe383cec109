#!/usr/bin/env node
// Regenerate examples/: patterns SIMULATED by Crystallog's own simulator (dist/, so run `npm run build`
// first) from the demo scenario's references and truth (src/app/demo.ts). Not measurements.
// Usage: node scripts/make-examples.mjs [output folder, default examples/]
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const { patternToXyText, simulatePattern, TYPICAL_LAB_INSTRUMENT } = await import(join(root, 'dist/src/core/crystal/simulate.js'));
const { anodeWavelength } = await import(join(root, 'dist/src/core/model/wavelengths.js'));
const { demoReferences, demoImpurityScales, DEMO_VARIANT_SIZES_NM, DEMO_SAFETY_NOTE } = await import(join(root, 'dist/src/app/demo.js'));

const out = resolve(process.argv[2] ?? join(root, 'examples'));
mkdirSync(out, { recursive: true });

const refs = demoReferences(join(root, 'reference-patterns', 'cif'));
const target = refs.get('target');
const wavelength = anodeWavelength('Cu');
const sampleRange = { twoThetaMinDeg: 5, twoThetaMaxDeg: 60, stepDeg: 0.01 };

/** The workup variants shipped here (a subset of the demo's five), with the size each was simulated at. */
const VARIANTS = ['as made', 'ground', 'washed', 'annealed 100 °C'];
/** Hours in humid air shipped here (a subset of the demo's series). */
const HOURS = [0, 2, 6, 24];

const files = [];
function write(fileName, description, phases, seed, range = sampleRange) {
  const pattern = simulatePattern({ phases, wavelength, ...range, instrument: TYPICAL_LAB_INSTRUMENT, peakCounts: 6000, noiseSeed: seed, name: fileName });
  const header = [`SIMULATED by Crystallog (scripts/make-examples.mjs), not a measurement: ${description}`, '2theta_deg counts', DEMO_SAFETY_NOTE];
  writeFileSync(join(out, fileName), patternToXyText(pattern, header));
  files.push({ file: fileName, description });
}

// Line-profile standard, measured wider than the samples (10–100°) and without size broadening, as in the demo.
write('simulated_LaB6_standard.xy', 'LaB6 line-profile standard, Cu Kα1/Kα2, 10–100° 2θ, instrument broadening only', [{ lines: refs.get('standard').lines, scale: 1 }], 301, { twoThetaMinDeg: 10, twoThetaMaxDeg: 100, stepDeg: 0.01 });

VARIANTS.forEach((variant, i) => {
  const size = DEMO_VARIANT_SIZES_NM.find((v) => v.variant === variant);
  if (!size) throw new Error(`the demo scenario has no variant "${variant}"`);
  const slug = variant.replace(/[^a-z0-9]+/gi, '-').replace(/-+$/, '');
  write(`simulated_MAPbI3_${slug}.xy`, `MAPbI3 ${variant}, crystallite size ${size.sizeNm} nm`, [{ lines: target.lines, scale: 1, sizeNm: size.sizeNm }], 101 + i);
});

HOURS.forEach((hours, i) => {
  const { hydrate, pbi2 } = demoImpurityScales(hours);
  const phases = [{ lines: target.lines, scale: 1 - hydrate - pbi2, sizeNm: 48 }];
  if (hydrate > 0) phases.push({ lines: refs.get('hydrate').lines, scale: hydrate, sizeNm: 30 });
  if (pbi2 > 0) phases.push({ lines: refs.get('pbi2').lines, scale: pbi2, sizeNm: 40 });
  const share = `monohydrate ${(100 * hydrate).toFixed(0)} %, PbI2 ${(100 * pbi2).toFixed(0)} % of the line scale`;
  write(`simulated_MAPbI3_humid-air_${hours}h.xy`, `MAPbI3 (48 nm) after ${hours} h in humid air, ${share}`, phases, 201 + i);
});

// The references the patterns were simulated from, in the reference JSON format `library import` reads.
const references = [...refs.values()].map(({ name, formula, tags, source, rir, cell, lines }) => ({ name, formula, tags, source, rir, cell, lines }));
writeFileSync(join(out, 'simulated-scenario-references.json'), JSON.stringify(references, null, 2) + '\n');
files.push({ file: 'simulated-scenario-references.json', description: 'the four references the patterns were simulated from' });

process.stdout.write(files.map((f) => `${f.file}: ${f.description}`).join('\n') + '\n');
