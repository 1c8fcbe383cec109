import { describe, expect, it } from 'vitest';
import { parseReferenceFile, referenceFileKind } from '../../src/node/library/import-files.js';
import { parseReferenceJson } from '../../src/core/library/json-format.js';
import { singleWavelength } from '../../src/core/model/wavelengths.js';

/** Rock salt, Fm-3m, a = 5.6402 Å (from memory); Na at 0,0,0 and Cl at ½,½,½. */
const NACL_CIF = `data_nacl
_chemical_formula_sum 'Na Cl'
_cell_length_a 5.6402
_cell_length_b 5.6402
_cell_length_c 5.6402
_cell_angle_alpha 90
_cell_angle_beta 90
_cell_angle_gamma 90
_symmetry_space_group_name_H-M 'F m -3 m'
loop_
_atom_site_label
_atom_site_type_symbol
_atom_site_fract_x
_atom_site_fract_y
_atom_site_fract_z
_atom_site_U_iso_or_equiv
Na1 Na 0 0 0 0.01
Cl1 Cl 0.5 0.5 0.5 0.01
`;

describe('reference files of every kind', () => {
  it('tells JSON, CSV and CIF apart by extension or by content', () => {
    expect(referenceFileKind('{}', 'a.json')).toBe('json');
    expect(referenceFileKind('[{"name": 1}]', 'a.dat')).toBe('json');
    expect(referenceFileKind(NACL_CIF, 'structure')).toBe('cif');
    expect(referenceFileKind('d,intensity\n', 'list')).toBe('csv');
  });

  it('computes lines and intensities from a structure CIF, recording the wavelength used', () => {
    const [ref] = parseReferenceFile(NACL_CIF, 'nacl.cif');
    // Fm-3m: only h, k, l all even or all odd (International Tables Vol. A); 200 is the strongest NaCl line
    // (NBS Circular 539 lists 2.821 Å at 100 — from memory).
    expect(ref!.lines[0]!.d).toBeCloseTo(5.6402 / Math.sqrt(3), 4);
    const strongest = ref!.lines.reduce((a, b) => ((b.intensity ?? 0) > (a.intensity ?? 0) ? b : a));
    expect(strongest.d).toBeCloseTo(5.6402 / 2, 4);
    expect(ref!.source.length).toBeGreaterThan(0);
    expect(ref!.intensityBasis).toMatch(/Cu/);
    const [mo] = parseReferenceFile(NACL_CIF, 'nacl.cif', { wavelength: singleWavelength(0.709317) });
    expect(mo!.intensityBasis).toMatch(/0\.709317/);
  });

  it('computes positions only from a cell given without lines', () => {
    const [ref] = parseReferenceJson(
      '{"name": "silicon (cell)", "source": "NIST SRM 640d", "cell": {"a": 5.43159, "b": 5.43159, "c": 5.43159, "alpha": 90, "beta": 90, "gamma": 90, "spaceGroup": "F d -3 m"}}',
      'cell.json',
    );
    // General reflection conditions of Fd-3m (International Tables Vol. A) leave 111, 220, 311, 222, 400 first;
    // 222 is allowed by the space group and vanishes in silicon only through its atoms' special position.
    expect(ref!.lines.slice(0, 5).map((l) => Math.round((5.43159 / l.d) ** 2))).toEqual([3, 8, 11, 12, 16]);
    expect(ref!.lines.every((l) => l.intensity === null)).toBe(true);
    expect(ref!.intensityBasis).toBeTruthy();
  });
});
