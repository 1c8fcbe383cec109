import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { cellMetric, equivalentIsotropicU } from '../../src/core/crystal/metric.js';
import { readCifStructure } from '../../src/core/crystal/structure.js';
import { expandToUnitCell } from '../../src/core/crystal/structure-factors.js';
import { InputError } from '../../src/core/errors.js';

function fixture(name: string): string {
  return readFileSync(new URL(`../fixtures/cif/${name}`, import.meta.url), 'utf8');
}

const CELL = `_cell_length_a 5.0
_cell_length_b 6.0
_cell_length_c 7.0
_cell_angle_alpha 90
_cell_angle_beta 100
_cell_angle_gamma 90
`;

const SITES = `loop_
_atom_site_label
_atom_site_type_symbol
_atom_site_fract_x
_atom_site_fract_y
_atom_site_fract_z
_atom_site_U_iso_or_equiv
Pb1 Pb2+ 0.1 0.2 0.3 0.02
`;

function expectInputError(text: string, pattern: RegExp): void {
  let caught: unknown = null;
  try {
    readCifStructure(text, 'bad.cif');
  } catch (err) {
    caught = err;
  }
  expect(caught).toBeInstanceOf(InputError);
  expect((caught as Error).message).toMatch(pattern);
}

describe('reading structure CIFs', () => {
  it('reads cell, symmetry by name, sites and citation of the NaCl fixture', () => {
    const s = readCifStructure(fixture('nacl.cif'), 'nacl.cif');
    expect(s.cell.a).toBe(5.6402);
    expect(s.spaceGroup.number).toBe(225);
    expect(s.sites.map((x) => x.element)).toEqual(['Na', 'Cl']);
    expect(s.sites[0].uIso).toBeCloseTo(1.65 / (8 * Math.PI ** 2), 10);
    expect(s.source).toMatch(/Swanson & Fuyat/);
    expect(s.name).toBe('halite');
    // The fixture's Hill-order sum 'Cl Na' reads as chemists write it.
    expect(s.formula).toBe('NaCl');
    expect(expandToUnitCell(s).count).toBe(8);
  });

  it('identifies the setting from an operator list (ZnO, P 63 m c) and from old-style tags (rutile)', () => {
    expect(readCifStructure(fixture('zno.cif'), 'zno.cif').spaceGroup.number).toBe(186);
    const rutile = readCifStructure(fixture('rutile.cif'), 'rutile.cif');
    expect(rutile.spaceGroup.symbol).toBe('P 42/m n m');
    expect(expandToUnitCell(rutile).count).toBe(6);
  });

  it('takes the Hall symbol, the number, and origin choice 2 by default, saying so in the notes', () => {
    expect(readCifStructure(fixture('si.cif'), 'si.cif').spaceGroup.symbol).toBe('F d -3 m:2');
    expect(readCifStructure(fixture('ceo2.cif'), 'ceo2.cif').spaceGroup.number).toBe(225);
    const named = readCifStructure(`data_x\n${CELL.replace('100', '90')}_symmetry_space_group_name_H-M 'Fd-3m'\n${SITES}`, 'x.cif');
    expect(named.spaceGroup.symbol).toBe('F d -3 m:2');
    expect(named.notes.join(' ')).toMatch(/origin choice 2 was assumed/);
  });

  it('places the 8 silicon atoms of the diamond cell on 8a and counts special positions once', () => {
    const atoms = expandToUnitCell(readCifStructure(fixture('si.cif'), 'si.cif'));
    expect(atoms.count).toBe(8);
    expect(expandToUnitCell(readCifStructure(fixture('corundum.cif'), 'corundum.cif')).count).toBe(30);
  });

  it('fills in angles fixed by the crystal system and a default displacement when none is given', () => {
    const text = `data_x
_cell_length_a 4.0
_cell_length_b 4.0
_cell_length_c 6.0
_space_group_name_H-M_alt 'P 63/m m c'
loop_
_atom_site_label
_atom_site_fract_x
_atom_site_fract_y
_atom_site_fract_z
Mg1 0 0 0
`;
    const s = readCifStructure(text, 'x.cif');
    expect([s.cell.alpha, s.cell.beta, s.cell.gamma]).toEqual([90, 90, 120]);
    expect(s.sites[0].element).toBe('Mg');
    expect(s.sites[0].uIso * 8 * Math.PI ** 2).toBeCloseTo(1, 10);
    expect(s.notes.join(' ')).toMatch(/B = 1 Å² assumed/);
  });

  it('uses Ueq from anisotropic U when no isotropic value is given', () => {
    const text = `data_x
${CELL}_symmetry_space_group_name_H-M 'P 21/c'
loop_
_atom_site_label
_atom_site_type_symbol
_atom_site_fract_x
_atom_site_fract_y
_atom_site_fract_z
_atom_site_adp_type
Pb1 Pb 0.1 0.2 0.3 Uani
loop_
_atom_site_aniso_label
_atom_site_aniso_U_11
_atom_site_aniso_U_22
_atom_site_aniso_U_33
_atom_site_aniso_U_12
_atom_site_aniso_U_13
_atom_site_aniso_U_23
Pb1 0.010 0.020 0.030 0 0.002 0
`;
    const s = readCifStructure(text, 'x.cif');
    const cell = { a: 5, b: 6, c: 7, alpha: 90, beta: 100, gamma: 90 };
    expect(s.sites[0].uIso).toBeCloseTo(equivalentIsotropicU(cellMetric(cell), [0.01, 0.02, 0.03, 0, 0.002, 0]), 12);
    // Orthogonal cell: Ueq = (U11 + U22 + U33)/3 (Fischer & Tillmanns, Acta Cryst. C44, 775 (1988)).
    const ortho = cellMetric({ a: 5, b: 6, c: 7, alpha: 90, beta: 90, gamma: 90 });
    expect(equivalentIsotropicU(ortho, [0.01, 0.02, 0.03, 0.001, 0.002, 0.003])).toBeCloseTo(0.02, 12);
  });

  it('reports a missing cell length with the file and the line of the block', () => {
    expectInputError(`data_x\n_cell_length_a 5\n_symmetry_space_group_name_H-M 'P 1'\n${SITES}`, /bad\.cif, line 1: .*_cell_length_b is missing/);
  });

  it('reports an unknown space group with the file and its line', () => {
    expectInputError(`data_x\n${CELL}_symmetry_space_group_name_H-M 'P 7/q'\n${SITES}`, /bad\.cif, line 8: space group "P 7\/q" is not known/);
  });

  it('reports an atom of unknown element with the file and its line', () => {
    expectInputError(`data_x\n${CELL}_symmetry_space_group_name_H-M 'P 1'\n${SITES}Xq1 Xq 0 0 0 0.01\n`, /bad\.cif, line 17: atom site "Xq1": element "Xq" is not known/);
  });

  it('reports missing symmetry, missing atom sites and broken numbers', () => {
    expectInputError(`data_x\n${CELL}${SITES}`, /no symmetry given/);
    expectInputError(`data_x\n${CELL}_symmetry_space_group_name_H-M 'P 1'\n`, /no atom sites/);
    expectInputError(`data_x\n${CELL.replace('5.0', 'five')}_symmetry_space_group_name_H-M 'P 1'\n${SITES}`, /line 2: .*"five" is not a number/);
    expectInputError(`data_x\n${CELL.replace('100', '190')}_symmetry_space_group_name_H-M 'P 1'\n${SITES}`, /angle beta/);
  });

  it('reports an unreadable symmetry operation with its line', () => {
    const text = `data_x\n${CELL}loop_\n_space_group_symop_operation_xyz\n'x,y,z'\n'-x,y+1/2'\n${SITES}`;
    expectInputError(text, /bad\.cif, line 11: symmetry operation "-x,y\+1\/2"/);
  });
});
