/**
 * Crystal-module speed: a reference (relative intensities for Cu Kα1) computed from the text of a
 * structure CIF with 100 atoms in the unit cell, to d = 1 Å, including CIF reading, space-group
 * identification from the listed operators, reflection enumeration and structure factors.
 * The structures are made up (seeded random coordinates), not real compounds.
 */
import { readCifStructure } from '../src/core/crystal/structure.js';
import { referenceFromStructure } from '../src/core/crystal/powder.js';
import { referenceFromCif } from '../src/core/library/from-crystal.js';
import { seededUniform } from '../src/core/numeric/random.js';
import { anodeWavelength } from '../src/core/model/wavelengths.js';
import { timeStats, type BenchRow } from './types.js';

const ELEMENTS = ['Pb', 'I', 'C', 'N', 'O'];

/** CIF text of a made-up structure: `sites` sites in a cell with the given operators. */
function syntheticCif(name: string, cell: number[], operations: string[], sites: number, seed: number): string {
  const uniform = seededUniform(seed);
  const lines = [
    `data_${name}`,
    `_cell_length_a ${cell[0]}`,
    `_cell_length_b ${cell[1]}`,
    `_cell_length_c ${cell[2]}`,
    `_cell_angle_alpha ${cell[3]}`,
    `_cell_angle_beta ${cell[4]}`,
    `_cell_angle_gamma ${cell[5]}`,
    'loop_',
    '_space_group_symop_operation_xyz',
    ...operations.map((op) => `'${op}'`),
    'loop_',
    '_atom_site_label',
    '_atom_site_type_symbol',
    '_atom_site_fract_x',
    '_atom_site_fract_y',
    '_atom_site_fract_z',
    '_atom_site_occupancy',
    '_atom_site_U_iso_or_equiv',
  ];
  for (let i = 0; i < sites; i++) {
    const element = ELEMENTS[i % ELEMENTS.length];
    lines.push(`${element}${i + 1} ${element} ${uniform().toFixed(5)} ${uniform().toFixed(5)} ${uniform().toFixed(5)} 1 0.0150`);
  }
  return lines.join('\n') + '\n';
}

function measure(name: string, repeats: number, work: () => number, target?: string, note?: string): BenchRow {
  const times: number[] = [];
  let size = 0;
  for (let i = 0; i < repeats; i++) {
    const t0 = performance.now();
    size = work();
    times.push(performance.now() - t0);
  }
  return {
    name,
    ...timeStats(times),
    ...(target ? { target } : {}),
    note: `${note ? `${note}; ` : ''}${size} lines`,
  };
}

export async function run(): Promise<BenchRow[]> {
  const wavelength = anodeWavelength('Cu');
  const cases = [
    {
      name: 'CIF → reference, 100 atoms, P 21/c (25 sites), to 1 Å',
      text: syntheticCif('p21c', [10.2, 12.4, 14.1, 90, 105.3, 90], ['x,y,z', '-x,y+1/2,-z+1/2', '-x,-y,-z', 'x,-y+1/2,z+1/2'], 25, 7),
    },
    {
      name: 'CIF → reference, 100 atoms, P 1 (100 sites), to 1 Å',
      text: syntheticCif('p1', [10.2, 12.4, 14.1, 88.1, 105.3, 93.7], ['x,y,z'], 100, 11),
    },
  ];
  const rows: BenchRow[] = [];
  // The first call also builds the space-group table used to identify operators: timed on its own.
  const cold = performance.now();
  readCifStructure(cases[0].text, 'p21c.cif');
  const coldMs = performance.now() - cold;
  for (const c of cases) {
    rows.push(
      measure(
        c.name,
        9,
        () => referenceFromStructure(readCifStructure(c.text, 'bench.cif'), { wavelength, dMinAngstrom: 1 }).lines.length,
        '< 200 ms',
        `first CIF read of the process also built the space-group table: ${coldMs.toFixed(1)} ms`,
      ),
    );
  }
  // The import path of `library import big.cif`: lines to the default d-minimum (0.8 Å for Cu) and I/Ic.
  const large = syntheticCif('large', [20.0, 21.0, 22.0, 90, 95.0, 90], ['x,y,z', '-x,y+1/2,-z+1/2', '-x,-y,-z', 'x,-y+1/2,z+1/2'], 3000, 13);
  rows.push(measure('CIF import → reference with I/Ic, 12 000 atoms, P 21/c (3 000 sites), to 0.8 Å', 3, () => referenceFromCif(large, 'large.cif').lines.length, '< 5 s'));
  return rows;
}
