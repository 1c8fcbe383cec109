import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { readCifStructure } from '../../core/crystal/structure.js';
import { referenceFromStructure } from '../../core/crystal/powder.js';
import { referenceIntensityRatio } from '../../core/crystal/rir.js';
import { anodeWavelength } from '../../core/model/wavelengths.js';
import { formatReferenceJson } from '../../core/library/json-format.js';
import type { Reference } from '../../core/model/reference.js';
import { seedFolder } from './seed.js';

/** One shipped reference: which CIF it is computed from, and what the library says about it. */
interface SeedEntry {
  name: string;
  cif: string;
  formula: string;
  tags: string[];
  /** The published cell or structure the CIF follows. */
  citation: string;
  dMinAngstrom: number;
  note: string;
}

/** Lines weaker than this (percent of the strongest) are left out to keep the seed files small. */
const MIN_SEED_INTENSITY = 0.5;

const SEED_ENTRIES: readonly SeedEntry[] = [
  {
    name: 'silicon',
    cif: 'silicon.cif',
    formula: 'Si',
    tags: ['standard'],
    citation: 'cell of NIST SRM 640d, a = 5.43159 Å at 22.5 °C (Black et al., Powder Diffraction 25, 187 (2010)); diamond-type structure',
    dMinAngstrom: 0.8,
    note: 'line-position standard',
  },
  {
    name: 'lanthanum hexaboride',
    cif: 'lab6.cif',
    formula: 'LaB6',
    tags: ['standard'],
    citation: 'cell of NIST SRM 660c, a = 4.15683 Å (NIST certificate, from memory); CaB6-type structure, x(B) = 0.1996 (from memory)',
    dMinAngstrom: 0.8,
    note: 'line-profile standard for the instrument broadening',
  },
  {
    name: 'corundum',
    cif: 'corundum.cif',
    formula: 'Al2O3',
    tags: ['standard'],
    citation: 'α-Al2O3 structure of Lewis, Schwarzenbach & Flack, Acta Cryst. A38, 733 (1982) (from memory)',
    dMinAngstrom: 0.8,
    note: 'the reference phase of I/Ic: its RIR is 1 by definition (NIST SRM 676a is this phase)',
  },
  {
    name: 'methylammonium lead iodide',
    cif: 'mapbi3-tetragonal.cif',
    formula: 'CH3NH3PbI3',
    tags: ['target'],
    citation:
      'tetragonal I4/mcm room-temperature phase of the type reported by Weller et al., Chem. Commun. 51, 4180 (2015) and Stoumpos et al., Inorg. Chem. 52, 9019 (2013); cell and coordinates approximate (from memory)',
    dMinAngstrom: 1.0,
    note: 'approximate model: disordered CH3NH3+ as half-occupied C/N positions, H atoms omitted',
  },
  {
    name: 'lead iodide',
    cif: 'pbi2.cif',
    formula: 'PbI2',
    tags: ['decomposition product', 'precursor'],
    citation: '2H-PbI2, CdI2 type (cell and z(I) as in Wyckoff, Crystal Structures Vol. 1 (1963); from memory)',
    dMinAngstrom: 1.0,
    note: 'stacking faults and other polytypes of real PbI2 are not modelled; layered crystals often show strong 00l preferred orientation',
  },
  {
    name: 'methylammonium lead iodide monohydrate',
    cif: 'mapbi3-monohydrate.cif',
    formula: 'CH3NH3PbI3·H2O',
    tags: ['decomposition product'],
    citation: 'cell as recalled from Leguy et al., Chem. Mater. 27, 3397 (2015) (from memory); atom positions an approximate model built for this file',
    dMinAngstrom: 1.0,
    note: 'APPROXIMATE MODEL: line positions follow the recalled cell, relative intensities are indicative only',
  },
];

const round = (value: number, digits: number): number => Math.round(value * 10 ** digits) / 10 ** digits;

/**
 * The seed references, computed from the CIFs in reference-patterns/cif/ (Cu Kα1, Bragg–Brentano,
 * no monochromator) with their computed reference intensity ratio I/Ic.
 */
export function buildSeedReferences(cifFolder: string = join(seedFolder(), 'cif')): Reference[] {
  const wavelength = anodeWavelength('Cu');
  return SEED_ENTRIES.map((entry) => {
    const structure = readCifStructure(readFileSync(join(cifFolder, entry.cif), 'utf8'), entry.cif);
    const computed = referenceFromStructure(structure, { wavelength, dMinAngstrom: entry.dMinAngstrom });
    const rir = round(referenceIntensityRatio(structure, { wavelength }), 2);
    return {
      name: entry.name,
      formula: entry.formula,
      tags: [...entry.tags],
      source: `${entry.citation}; computed by Crystallog from the CIF in reference-patterns/cif/${entry.cif}`,
      notes: [
        entry.note,
        computed.notes ?? '',
        `RIR (I/Ic, corundum) computed from the structure for Cu Kα1: strongest-line m|F|²LP/(V²ρ) relative to corundum's (Chung 1974)`,
        `lines under ${MIN_SEED_INTENSITY} % of the strongest left out`,
      ]
        .map((part) => part.replace(/\.(?=;|$)/g, '').trim())
        .filter((part) => part !== '')
        .join('; '),
      rir,
      cell: computed.cell ?? null,
      intensityBasis: computed.intensityBasis ?? '',
      lines: computed.lines
        .filter((line) => (line.intensity ?? 0) >= MIN_SEED_INTENSITY)
        .map((line) => ({ ...line, d: round(line.d, 6), intensity: round(line.intensity ?? 0, 2) })),
    };
  });
}

/** File name of a seed reference in reference-patterns/: its name in lower case with hyphens. */
function seedFileName(ref: Reference): string {
  return `${ref.name.toLowerCase().replace(/[^a-z0-9]+/g, '-')}.json`;
}

/** The seed files to write: one reference per file, in the library's JSON format. */
export function seedFiles(refs: readonly Reference[] = buildSeedReferences()): Array<{ fileName: string; text: string }> {
  return refs.map((ref) => ({ fileName: seedFileName(ref), text: formatReferenceJson([ref]) }));
}
