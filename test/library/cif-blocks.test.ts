/**
 * Structure CIFs written by refinement programs: several data blocks (overall, phase, pattern) in one
 * file with "?" for unknown values. Every block with a cell and atom sites becomes a reference, named
 * from its phase name, chemical name or formula, else the file and block name; the other blocks are
 * reported as skipped with the reason.
 */
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { readCifStructures } from '../../src/core/crystal/structure.js';
import { referencesFromCif } from '../../src/core/library/from-crystal.js';
import { InputError } from '../../src/core/errors.js';
import { useTempDir } from './helpers.js';

const tempDir = useTempDir();

const phaseBlock = (name: string, items: string, a = '5.0'): string => `data_${name}
${items}
_cell_length_a ${a}
_cell_length_b 6.0
_cell_length_c 7.0
_cell_angle_alpha 90
_cell_angle_beta 100.0(2)
_cell_angle_gamma 90
_cell_formula_units_Z ?
_symmetry_space_group_name_H-M 'P 1 21/c 1'
loop_
_atom_site_label
_atom_site_type_symbol
_atom_site_fract_x
_atom_site_fract_y
_atom_site_fract_z
_atom_site_U_iso_or_equiv
Pb1 Pb 0.1 0.2 0.3 0.02(1)
`;

const overall = `data_overall
_audit_creation_method ?
_journal_name_full ?
_publ_section_comment
; ?
;
`;

const patternBlock = `data_pattern
_pd_block_id ?
loop_
_pd_meas_2theta_scan
_pd_meas_counts_total
10.0 100
10.1 120
`;

describe('structure CIFs with several data blocks', () => {
  it('reads each phase block, named from phase name, chemical name or formula, and lists the others as skipped', () => {
    const text =
      overall +
      phaseBlock('phase_1', "_pd_phase_name 'lead oxide A'\n_chemical_name_common ?") +
      phaseBlock('phase_2', "_chemical_name_systematic\n; ?\n;\n_chemical_name_common 'lead oxide B'", '5.1') +
      phaseBlock('phase_3', '_chemical_name_common ?\n_chemical_formula_sum "Pb O2"', '5.2') +
      patternBlock +
      'data_cell_only\n_cell_length_a 4.0\n';
    const { structures, skipped } = readCifStructures(text, 'refined.cif');
    expect(structures.map((s) => [s.name, s.block, s.cell.a])).toEqual([
      ['lead oxide A', 'phase_1', 5.0],
      ['lead oxide B', 'phase_2', 5.1],
      ['PbO2', 'phase_3', 5.2],
    ]);
    expect(skipped.map((s) => [s.block, s.line])).toEqual([
      ['overall', 1],
      ['pattern', text.split('\n').indexOf('data_pattern') + 1],
      ['cell_only', text.split('\n').indexOf('data_cell_only') + 1],
    ]);
    expect(skipped[0].reason).toContain('no cell and no atom sites');
    expect(skipped[1].reason).toContain('powder pattern');
    expect(skipped[2].reason).toContain('no atom sites');
    // A text field holding only "?" is no comment.
    expect(structures[0].notes).not.toContain('?');
  });

  it('never names a phase "?" or ".": unknown names give the file and block name, made unique within the file', () => {
    const text = phaseBlock('?', '_chemical_name_common ?\n_chemical_formula_sum .') + phaseBlock('#(C)', "_chemical_name_common '?'") + phaseBlock('#(D)', "_chemical_name_common '?'");
    const { structures } = readCifStructures(text, 'some/dir/refined.cif');
    expect(structures.map((s) => s.name)).toEqual(['refined', 'refined data_#(C)', 'refined data_#(D)']);
  });

  it('keeps the same name given twice in one file apart by block name', () => {
    const text = phaseBlock('rt', "_pd_phase_name 'lead oxide'") + phaseBlock('ht', "_pd_phase_name 'lead oxide'", '5.3');
    expect(readCifStructures(text, 'x.cif').structures.map((s) => s.name)).toEqual(['lead oxide data_rt', 'lead oxide data_ht']);
  });

  it('steps over metadata it cannot read, with a note naming the line, and stays strict on the atom sites', () => {
    const good = readCifStructures(phaseBlock('p', '_diffrn_measurement_device_type?\n_pd_phase_name x'), 'x.cif').structures[0];
    expect(good.name).toBe('x');
    expect(good.notes.join(' ')).toMatch(/line 2 could not be read: tag _diffrn_measurement_device_type\? has no value/);

    const broken = phaseBlock('p', '_pd_phase_name x').replace('Pb1 Pb 0.1 0.2 0.3 0.02(1)', 'Pb1 Pb 0.1 0.2 0.3 0.02(1)\nO1 O 0.5 0.5');
    let caught: unknown;
    try {
      readCifStructures(broken, 'x.cif');
    } catch (err) {
      caught = err;
    }
    expect(caught).toBeInstanceOf(InputError);
    expect((caught as InputError).line).toBe(19);
    expect((caught as InputError).message).toMatch(/x\.cif, line 19: the loop of _atom_site_fract_x .* one value per tag/);
  });

  it('refuses a file whose blocks hold no structure, giving each block and why', () => {
    expect(() => readCifStructures(overall + patternBlock, 'pattern.cif')).toThrow(/no atom sites.*data_overall: no cell and no atom sites.*data_pattern: a powder pattern/);
  });
});

describe('crystallog library import of a CIF written by a refinement program (the command itself)', () => {
  it('imports the phase blocks of both measured oxyfluoride CIFs into a fresh library and reports the skipped blocks', { timeout: 120_000 }, () => {
    // Files: ozakary/data-NaMO2F2 (commit 45a86e5), CC0 1.0; see test/fixtures/measured/README.md.
    const root = process.cwd();
    const dir = tempDir();
    const library = join(dir, 'fresh.sqlite');
    const cifs = ['nanbo2f2-refined.cif', 'natao2f2-refined.cif'].map((f) => join(root, 'test/fixtures/measured', f));
    const run = (...args: string[]) => spawnSync(process.execPath, [join(root, 'bin/crystallog.js'), 'library', ...args], { encoding: 'utf8' });

    const imported = run('import', ...cifs, '--library', library, '--json');
    expect(imported.status, imported.stderr).toBe(0);
    const result = JSON.parse(imported.stdout) as { added: string[]; files: { references: string[]; skipped: { block: string; line: number; reason: string }[] }[] };
    // The files give no phase, chemical name or formula (all "?"), so the names are file + block name.
    expect(result.added).toEqual(['nanbo2f2-refined data_#(C)', 'natao2f2-refined data_#(C)']);
    for (const file of result.files) {
      expect(file.skipped).toEqual([{ block: 'global', line: 21, reason: 'no cell and no atom sites (metadata only)' }]);
    }

    const listed = JSON.parse(run('list', '--library', library, '--json').stdout) as { references: { name: string; spaceGroup: string; lineCount: number }[] };
    expect(listed.references.map((r) => r.spaceGroup)).toEqual(['P 1 21/c 1', 'P 1 21/c 1']);
    expect(listed.references.every((r) => r.lineCount > 100)).toBe(true);

    const again = run('import', cifs[0], '--library', join(dir, 'text.sqlite'));
    expect(again.status, again.stderr).toBe(0);
    expect(again.stdout).toContain('skipped data_global (line 21): no cell and no atom sites');
  });
});

describe('blocks with a cell and a reflection list but no atom sites', () => {
  const reflectionBlock = (columns: string[], rows: string[]): string => `data_refl
_pd_phase_name 'listed phase'
_cell_length_a 5.0
_cell_length_b 6.0
_cell_length_c 7.0
_cell_angle_alpha 90
_cell_angle_beta 90
_cell_angle_gamma 90
_symmetry_space_group_name_H-M 'P m m m'
loop_
${columns.join('\n')}
${rows.join('\n')}
`;

  it('makes a reference from |F|² and multiplicities: m |F|² LP at Cu Kα1, d from the cell', () => {
    const text = reflectionBlock(['_refln_index_h', '_refln_index_k', '_refln_index_l', '_refln_mult', '_refln_F_squared_calc'], ['1 0 0 2 400.0', '0 1 1 4 100(2)', '0 0 0 1 5', '1 1 1 8 ?']);
    const { references, skipped } = referencesFromCif(text, 'listed.cif');
    expect(skipped).toEqual([]);
    expect(references).toHaveLength(1);
    const [ref] = references;
    expect(ref.name).toBe('listed phase');
    expect(ref.cell?.spaceGroup).toBe('P m m m');
    expect(ref.lines.map((l) => [l.hkl, l.multiplicity])).toEqual([[[1, 0, 0], 2], [[0, 1, 1], 4]]);
    expect(ref.lines[0].d).toBeCloseTo(5.0, 12);
    expect(ref.lines[1].d).toBeCloseTo(1 / Math.hypot(1 / 6, 1 / 7), 12);
    // Written out: LP = (1 + cos²2θ)/(sin²θ cosθ), 2θ from λ = 1.5405929 Å (Cu Kα1).
    const lp = (d: number) => {
      const theta = Math.asin(1.5405929 / (2 * d));
      return (1 + Math.cos(2 * theta) ** 2) / (Math.sin(theta) ** 2 * Math.cos(theta));
    };
    const ratio = (4 * 100 * lp(ref.lines[1].d)) / (2 * 400 * lp(ref.lines[0].d));
    expect(ref.lines[0].intensity).toBe(100);
    expect(ref.lines[1].intensity).toBeCloseTo(100 * ratio, 2);
    expect(ref.intensityBasis).toContain('_refln_f_squared_calc with _refln_mult');
  });

  it('takes integrated intensities as given when the list has no |F|²', () => {
    const text = reflectionBlock(['_refln_index_h', '_refln_index_k', '_refln_index_l', '_refln_intensity_meas'], ['1 0 0 50', '0 1 1 200']);
    const [ref] = referencesFromCif(text, 'listed.cif').references;
    expect(ref.lines.map((l) => l.intensity)).toEqual([25, 100]);
    expect(ref.intensityBasis).toContain('as given');
  });

  it('skips a list of |F|² without multiplicities, and a list beside a structure (the structure gives the lines), saying why', () => {
    const noMultiplicity = reflectionBlock(['_refln_index_h', '_refln_index_k', '_refln_index_l', '_refln_F_squared_calc'], ['1 0 0 400']);
    expect(() => readCifStructures(noMultiplicity, 'x.cif')).toThrow(/data_refl: a cell and reflections but neither intensities nor \|F\|² with multiplicities/);
    const withStructure = phaseBlock('phase', "_pd_phase_name 'lead oxide'") + reflectionBlock(['_refln_index_h', '_refln_index_k', '_refln_index_l', '_refln_intensity_meas'], ['1 0 0 lots']);
    // Not read, so not refused either: its (here unreadable) intensities are no part of the import.
    const { structures, reflectionLists, skipped } = readCifStructures(withStructure, 'x.cif');
    expect(structures.map((s) => s.name)).toEqual(['lead oxide']);
    expect(reflectionLists).toEqual([]);
    expect(skipped).toEqual([{ block: 'refl', line: 19, reason: 'a reflection list, not read: the structure in the file gives the lines' }]);
  });
});
