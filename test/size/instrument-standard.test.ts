/**
 * Fitting an instrument profile from the right standard: the standard can be named as chemists write
 * it (LaB6), the wrong standard for the pattern is refused with a sentence instead of saving a
 * one-peak profile, and an untagged reference named on purpose is used with a caution.
 * The patterns are simulated by Crystallog (seed references, typical lab instrument), not measured.
 */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { instrumentCommand } from '../../src/cli/commands/instrument.js';
import { patternToXyText } from '../../src/core/crystal/simulate.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { reference, simulate, STANDARD } from '../series/perovskite-fixtures.js';
import { loadSeedReferences } from '../../src/node/library/seed.js';

const dir = mkdtempSync(join(tmpdir(), 'crystallog-standard-'));
const libraryPath = join(dir, 'lab.sqlite');
const library = ReferenceLibrary.open(libraryPath);
library.importReferences(loadSeedReferences());
library.close();
const lab6File = join(dir, 'lab6.xy');
writeFileSync(lab6File, patternToXyText(simulate([{ lines: reference(STANDARD).lines, scale: 1 }], 301, { twoThetaMinDeg: 10, twoThetaMaxDeg: 100 }), ['simulated by Crystallog']));
const out = join(dir, 'profile.json');

describe('the instrument standard', () => {
  it('is found by its formula as chemists write it', () => {
    const profile = instrumentCommand(lab6File, { standard: 'LaB6', library: libraryPath, out });
    expect(profile.standard.name).toBe(STANDARD);
    expect(profile.residuals.length).toBeGreaterThanOrEqual(5);
  });

  it('refuses a fit of the wrong standard for the pattern (too few of its lines), saying why', () => {
    expect(() => instrumentCommand(lab6File, { standard: 'corundum', library: libraryPath, out: join(dir, 'wrong.json') })).toThrow(
      /only \d lines? of corundum .* found as resolved peaks .* needs at least 5 .* Check that this is the pattern of corundum/,
    );
  });

  it('takes an untagged reference named on purpose, with a caution', () => {
    const copy = join(dir, 'untagged.sqlite');
    const lib = ReferenceLibrary.open(copy);
    lib.importReferences([{ ...reference(STANDARD), name: 'my hexaboride', formula: 'B6La', tags: [] }]);
    lib.close();
    const profile = instrumentCommand(lab6File, { standard: 'my hexaboride', library: copy, out: join(dir, 'untagged.json') });
    expect(profile.warnings.join(' ')).toMatch(/not tagged as a line-profile standard/);
  });
});
