/**
 * A structure CIF with 3 000 atom sites (12 000 atoms in the cell, P 21/c, made-up coordinates from a
 * seeded generator): read and turned into powder lines and a reference. Once the structure-factor
 * tables were laid out atom by atom and an import took over a minute; the speed itself is watched in
 * bench/crystal.ts. Here the results are checked against a direct sum written out separately.
 */
import { describe, expect, it } from 'vitest';
import { computePowderLines } from '../../src/core/crystal/powder.js';
import { referenceIntensityRatio } from '../../src/core/crystal/rir.js';
import { readCifStructure, type CrystalStructure } from '../../src/core/crystal/structure.js';
import { dispersionForWavelength, expandToUnitCell, formFactor, formFactorCoefficients } from '../../src/core/crystal/structure-factors.js';
import { TRANSLATION_DENOMINATOR } from '../../src/core/crystal/symop.js';
import { referenceFromCif, referencesFromCif } from '../../src/core/library/from-crystal.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { seededUniform } from '../../src/core/numeric/random.js';

const ELEMENTS = ['O', 'C', 'N', 'Na', 'Si'];

const P21C = ["'x,y,z'", "'-x,y+1/2,-z+1/2'", "'-x,-y,-z'", "'x,-y+1/2,z+1/2'"];
const P21 = ["'x,y,z'", "'-x,y+1/2,-z'"];
/** Sites on inversion centres of P 21/c (two atoms in the cell each, not four). */
const ON_INVERSION_CENTRES = ['Na9001 Na 0 0 0 0.0150 1', 'Si9002 Si 0.5 0 0.5 0.0120 1', 'O9003 O 0 0.5 0 0.0200 0.5'];

/** CIF text of `sites` made-up sites (cell about 20 × 21 × 22 Å, P 21/c unless other operations are given), plus any extra site rows. */
function largeCif(sites: number, seed = 3, operations = P21C, extra: string[] = []): string {
  const uniform = seededUniform(seed);
  const lines = [
    'data_large',
    "_chemical_name_common 'made-up large cell'",
    '_cell_length_a 20.0',
    '_cell_length_b 21.0',
    '_cell_length_c 22.0',
    '_cell_angle_alpha 90',
    '_cell_angle_beta 95.0',
    '_cell_angle_gamma 90',
    'loop_',
    '_symmetry_equiv_pos_as_xyz',
    ...operations,
    'loop_',
    '_atom_site_label',
    '_atom_site_type_symbol',
    '_atom_site_fract_x',
    '_atom_site_fract_y',
    '_atom_site_fract_z',
    '_atom_site_U_iso_or_equiv',
    '_atom_site_occupancy',
  ];
  for (let i = 0; i < sites; i++) {
    const element = ELEMENTS[i % ELEMENTS.length];
    const u = (0.01 + 0.02 * uniform()).toFixed(4);
    const occupancy = i % 7 === 0 ? '0.5' : '1';
    lines.push(`${element}${i + 1} ${element} ${uniform().toFixed(5)} ${uniform().toFixed(5)} ${uniform().toFixed(5)} ${u} ${occupancy}`);
  }
  return [...lines, ...extra].join('\n') + '\n';
}

/**
 * ½(|F(hkl)|² + |F(−h−k−l)|²) = |P|² + |Q|² written out: every distinct image of every site under the
 * operations, with Math.cos / Math.sin of the phase (no tables, no pairing), f0 + f′ and f″ of Cu Kα1.
 */
function directPowderFSquared(structure: CrystalStructure, h: number, k: number, l: number, d: number): number {
  const s2 = 1 / (4 * d * d);
  const terms = dispersionForWavelength(anodeWavelength('Cu').lambda1).terms!;
  let pRe = 0;
  let pIm = 0;
  let qRe = 0;
  let qIm = 0;
  for (const site of structure.sites) {
    const t = site.occupancy * Math.exp(-8 * Math.PI * Math.PI * site.uIso * s2);
    const f = formFactor(formFactorCoefficients(site.element), s2) + terms[site.element][0];
    const fpp = terms[site.element][1];
    const images: number[][] = [];
    for (const op of structure.spaceGroup.operations) {
      const x = [0, 1, 2].map((i) => op.r[3 * i] * site.x + op.r[3 * i + 1] * site.y + op.r[3 * i + 2] * site.z + op.t[i] / TRANSLATION_DENOMINATOR);
      const same = (q: number[]) => q.every((v, i) => Math.abs(v - x[i] - Math.round(v - x[i])) < 1e-9);
      if (images.some(same)) continue;
      images.push(x);
      const phase = 2 * Math.PI * (h * x[0] + k * x[1] + l * x[2]);
      pRe += t * f * Math.cos(phase);
      pIm += t * f * Math.sin(phase);
      qRe += t * fpp * Math.cos(phase);
      qIm += t * fpp * Math.sin(phase);
    }
  }
  return pRe * pRe + pIm * pIm + qRe * qRe + qIm * qIm;
}

describe('a structure CIF with 3 000 atom sites', () => {
  const text = largeCif(3000);

  it.each([
    ['P 21/c, 3 000 general sites and 3 on inversion centres', largeCif(3000, 3, P21C, ON_INVERSION_CENTRES), 3003, 14, 12006],
    ['P 21 (no inversion), 600 sites', largeCif(600, 9, P21), 600, 4, 1200],
  ])('%s: |F|² of sampled reflections equal the direct sum over every atom', { timeout: 300_000 }, (_label, cif, sites, group, atoms) => {
    const structure = readCifStructure(cif, 'large.cif');
    expect(structure.sites).toHaveLength(sites);
    expect(structure.spaceGroup.number).toBe(group);
    expect(expandToUnitCell(structure).count).toBe(atoms);
    // P 21/c holds the inversion through the origin: the sum runs over inversion pairs (the other path, P 21, over every atom).
    expect(expandToUnitCell(structure).inversionPartner !== null).toBe(group === 14);
    const lines = computePowderLines(structure, { wavelength: anodeWavelength('Cu'), dMinAngstrom: 1.2 });
    expect(lines.length).toBeGreaterThan(1000);
    const pick = seededUniform(17);
    const sample = Array.from({ length: 40 }, () => lines[Math.floor(pick() * lines.length)]);
    sample.push(lines.reduce((a, b) => (b.relativeIntensity > a.relativeIntensity ? b : a)));
    for (const line of sample) {
      const direct = directPowderFSquared(structure, ...line.hkl, line.d);
      expect(Math.abs(line.fSquared - direct)).toBeLessThan(1e-9 * direct + 1e-6);
    }
    expect(Math.max(...lines.map((l) => l.relativeIntensity))).toBeCloseTo(100, 9);
  });

  it('imports as one reference to the default d-minimum, with its computed I/Ic', { timeout: 300_000 }, () => {
    const { references, skipped } = referencesFromCif(text, 'large.cif');
    expect(skipped).toEqual([]);
    expect(references).toHaveLength(1);
    const [ref] = references;
    expect(ref.name).toBe('made-up large cell');
    expect(ref.notes).toContain('3000 sites');
    expect(ref.lines.length).toBeGreaterThan(10000);
    expect(Math.max(...ref.lines.map((l) => l.intensity ?? 0))).toBe(100);
    expect(ref.rir).toBeGreaterThan(0);
  });

  it('gives the same I/Ic from the lines it computed for the reference as computed afresh (small cell)', () => {
    const small = largeCif(12, 5);
    const ref = referenceFromCif(small, 'small.cif');
    const afresh = Math.round(referenceIntensityRatio(readCifStructure(small, 'small.cif'), { wavelength: anodeWavelength('Cu') }) * 100) / 100;
    expect(ref.rir).toBe(afresh);
    expect(ref.rir).toBeGreaterThan(0);
  });
});
