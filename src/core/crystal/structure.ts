import { cifFormula } from './formula.js';
import { InputError } from '../errors.js';
import { isUnknownValue, parseCif, problemInLoop, requireCifNumber, type CifBlock, type CifLoop, type CifProblem, type CifValue } from '../cif/syntax.js';
import { baseName } from '../model/file-name.js';
import type { UnitCell } from '../model/cell.js';
import { cellMetric, checkCell, dSpacing, equivalentIsotropicU } from './metric.js';
import { SCATTERING_FACTORS } from './scattering-factors.js';
import { getSpaceGroup, identifySpaceGroup, type SpaceGroup } from './space-groups.js';
import { closeGroup, parseXyzOperation, type SymOp } from './symop.js';

/** One atom site of a structure, as read from the file. */
export interface AtomSite {
  label: string;
  /** Element symbol, a key of the scattering-factor table ("Pb", "O"). */
  element: string;
  /** The type symbol as written (may carry a charge, "Pb2+"). */
  typeSymbol: string;
  /** Fractional coordinates. */
  x: number;
  y: number;
  z: number;
  occupancy: number;
  /** Isotropic displacement parameter U in Å² (Uiso, B/8π², or Ueq from the anisotropic U). */
  uIso: number;
  /** Line of the file where the site is given. */
  line: number;
}

/** A crystal structure read from a CIF. */
export interface CrystalStructure {
  /** The phase name, chemical name or formula; else the file and block name. Never "?" or ".". */
  name: string;
  /** Name of the data block it was read from (absent for a structure made in code). */
  block?: string;
  formula: string | null;
  /** The cell, with spaceGroup set to the group's symbol. */
  cell: UnitCell;
  spaceGroup: SpaceGroup;
  sites: AtomSite[];
  /** Citation of the structure as the file gives it. */
  source: string;
  /** What the reader assumed or noticed (defaults taken, remarks in the file). */
  notes: string[];
  fileName: string;
}

/** B = 8π² U (International Tables Vol. C, section 8.7; common practice). */
const B_PER_U = 8 * Math.PI * Math.PI;
/** Displacement assumed when a site gives none: B = 1 Å² (common practice). */
const DEFAULT_U = 1 / B_PER_U;

const TAGS = {
  length: ['_cell_length_a', '_cell_length_b', '_cell_length_c'],
  angle: ['_cell_angle_alpha', '_cell_angle_beta', '_cell_angle_gamma'],
  operations: ['_space_group_symop_operation_xyz', '_symmetry_equiv_pos_as_xyz'],
  hall: ['_space_group_name_hall', '_symmetry_space_group_name_hall'],
  hm: ['_space_group_name_h-m_alt', '_symmetry_space_group_name_h-m', '_space_group_name_h-m'],
  number: ['_space_group_it_number', '_symmetry_int_tables_number'],
  name: ['_pd_phase_name', '_chemical_name_common', '_chemical_name_mineral', '_chemical_name_systematic'],
  sites: '_atom_site_fract_x',
  reflections: ['_refln_index_h', '_pd_refln_index_h'],
  pattern: ['_pd_meas_counts_total', '_pd_meas_intensity_total', '_pd_proc_intensity_total', '_pd_calc_intensity_total'],
};

/** Read tags in either CIF 1 ("_cell_length_a") or DDL2 ("_cell.length_a") spelling. */
class BlockView {
  private readonly items = new Map<string, CifValue>();
  constructor(
    readonly block: CifBlock,
    readonly fileName: string,
    /** Syntax problems a tolerant reading stepped over: a loop this reader takes data from must have none. */
    readonly problems: readonly CifProblem[] = [],
  ) {
    for (const [tag, value] of block.items) this.items.set(tag.replace(/\./g, '_'), value);
  }

  item(tags: readonly string[]): CifValue | undefined {
    for (const tag of tags) {
      const v = this.items.get(tag);
      if (v && !(!v.quoted && (v.text === '?' || v.text === '.'))) return v;
    }
    return undefined;
  }

  /** Text of the first tag with a known value; a quoted or text-field "?" alone counts as unknown too. */
  text(tags: readonly string[]): string | null {
    for (const tag of tags) {
      const v = this.items.get(tag);
      if (v && !isUnknownValue(v)) return v.text.trim().replace(/\s+/g, ' ');
    }
    return null;
  }

  number(tags: readonly string[], what: string): { value: number; line: number } | null {
    const v = this.item(tags);
    if (!v) return null;
    const parsed = requireCifNumber(v, this.fileName, what);
    return parsed ? { value: parsed.value, line: v.line } : null;
  }

  has(tag: string): boolean {
    return this.items.has(tag) || this.block.loops.some((l) => l.tags.some((t) => t.replace(/\./g, '_') === tag));
  }

  loop(tag: string): { loop: CifLoop; column: (name: string) => number } | null {
    const normalized = (t: string): string => t.replace(/\./g, '_');
    const loop = this.block.loops.find((l) => l.tags.some((t) => normalized(t) === tag));
    if (!loop) return null;
    const problem = problemInLoop(loop, this.problems);
    if (problem) fail(`the loop of ${tag} starting at line ${loop.line} cannot be read: ${problem.message}`, this.fileName, problem.line);
    const names = loop.tags.map(normalized);
    return { loop, column: (name) => names.indexOf(name) };
  }
}

function fail(message: string, fileName: string, line?: number): never {
  throw new InputError(message, line === undefined ? { file: fileName } : { file: fileName, line });
}

/** A data block of a structure CIF that was not read as a structure, and why. */
export interface SkippedCifBlock {
  block: string;
  line: number;
  reason: string;
}

/** One reflection of a block's reflection list: F² (then intensity = m F² LP) or an integrated intensity as given. */
export interface ListedReflection {
  hkl: [number, number, number];
  d: number;
  multiplicity: number;
  fSquared: number | null;
  intensity: number | null;
}

/** A data block with a cell and a reflection list but no atom sites (the reflections of a refinement). */
export interface CifReflectionList {
  name: string;
  block: string;
  /** Line of the block's data_ header. */
  line: number;
  formula: string | null;
  cell: UnitCell;
  reflections: ListedReflection[];
  /** Which columns gave the intensities, for the reference's intensity basis. */
  basis: string;
  source: string;
  notes: string[];
  fileName: string;
}

export interface CifStructures {
  structures: CrystalStructure[];
  /** Blocks with a cell and reflections but no atom sites. */
  reflectionLists: CifReflectionList[];
  skipped: SkippedCifBlock[];
}

/**
 * Read every structure of a CIF: each data block with a cell and atom sites (files written by
 * refinement programs hold a phase block beside pattern and overall blocks). Tolerant on metadata
 * (syntax problems elsewhere become notes), strict on data: a block with a cell and atom sites that
 * cannot be read is an InputError naming the file and line. Blocks without them are listed as skipped.
 */
export function readCifStructures(text: string, fileName: string): CifStructures {
  const problems: CifProblem[] = [];
  const blocks = parseCif(text, fileName, { problems });
  if (blocks.length === 0) {
    if (problems.length > 0) fail(`${problems[0].message} (and no data_ block was found)`, fileName, problems[0].line);
    fail('no data_ block found; a structure CIF starts with data_<name>', fileName);
  }
  const structures: CrystalStructure[] = [];
  const reflectionLists: CifReflectionList[] = [];
  const skipped: SkippedCifBlock[] = [];
  const kinds = blocks.map((block) => blockKind(new BlockView(block, fileName, problems)));
  // Refinement files repeat the phase's reflections in the pattern block: the structure gives the lines.
  const withStructure = kinds.includes('structure');
  blocks.forEach((block, index) => {
    const view = new BlockView(block, fileName, problems);
    const kind = kinds[index];
    if (typeof kind !== 'string' || (kind === 'reflections' && withStructure)) {
      const reason = typeof kind === 'string' ? 'a reflection list, not read: the structure in the file gives the lines' : kind.skip;
      skipped.push({ block: block.name, line: block.line, reason });
      return;
    }
    const end = blocks[index + 1]?.line ?? Number.POSITIVE_INFINITY;
    const notes = problems
      .filter((p) => p.line >= block.line && p.line < end)
      .map((p) => `CIF metadata at line ${p.line} could not be read: ${p.message}; ${p.action}`);
    if (kind === 'structure') structures.push(readBlockStructure(view, notes));
    else reflectionLists.push(readBlockReflections(view, notes));
  });
  if (structures.length === 0 && reflectionLists.length === 0) {
    const withSites = blocks.find((b) => new BlockView(b, fileName, problems).has(TAGS.sites));
    // Atom sites without a cell: read the block anyway so the error names what is missing.
    if (withSites) readBlockStructure(new BlockView(withSites, fileName, problems), []);
    fail(
      `no atom sites: the file needs a loop with _atom_site_fract_x, _atom_site_fract_y, _atom_site_fract_z (${skipped.map((s) => `data_${s.block}: ${s.reason}`).join('; ')})`,
      fileName,
      blocks[0].line,
    );
  }
  nameUniquely([...structures, ...reflectionLists], fileName);
  return { structures, reflectionLists, skipped };
}

/**
 * Read a crystal structure from CIF text (IUCr core dictionary): cell, symmetry operations or
 * space-group name (Hall, Hermann–Mauguin or number), atom sites with occupancies and isotropic
 * (or equivalent isotropic) displacement: the first structure of readCifStructures.
 */
export function readCifStructure(text: string, fileName: string): CrystalStructure {
  const { structures, reflectionLists } = readCifStructures(text, fileName);
  if (structures.length === 0) {
    fail(`no atom sites: data_${reflectionLists[0].block} gives reflections only, no structure`, fileName);
  }
  return structures[0];
}

const F_SQUARED = ['_refln_f_squared_calc', '_refln_f_squared_meas'];
const F = ['_refln_f_calc', '_refln_f_meas'];
const INTENSITY = ['_refln_intensity_calc', '_refln_intensity_meas', '_pd_refln_intensity_calc', '_pd_refln_intensity_meas'];
const MULTIPLICITY = ['_refln_mult', '_pd_refln_multiplicity', '_refln_multiplicity'];

/** What a block holds to import: a structure, a reflection list, or nothing (and why). */
function blockKind(view: BlockView): 'structure' | 'reflections' | { skip: string } {
  const cell = view.item(['_cell_length_a']) !== undefined;
  const sites = view.has(TAGS.sites);
  if (cell && sites) return 'structure';
  if (sites) return { skip: 'atom sites but no cell (_cell_length_a)' };
  const reflections = TAGS.reflections.find((t) => view.has(t));
  if (cell && reflections) {
    const has = (tags: string[]) => tags.some((t) => view.has(t));
    if (has(INTENSITY) || ((has(F_SQUARED) || has(F)) && has(MULTIPLICITY))) return 'reflections';
    return { skip: 'a cell and reflections but neither intensities nor |F|² with multiplicities, and no atom sites' };
  }
  if (TAGS.pattern.some((t) => view.has(t))) return { skip: 'a powder pattern, no structure (read it as a pattern instead)' };
  if (cell) return { skip: 'a cell but no atom sites' };
  return { skip: 'no cell and no atom sites (metadata only)' };
}

/**
 * A block's reflection list: hkl, d (from the cell unless given), multiplicity, and |F|² (calculated
 * before measured; F² from F) or, failing that, the integrated intensity as the file gives it.
 */
function readBlockReflections(view: BlockView, notes: string[]): CifReflectionList {
  const { block, fileName } = view;
  const indexTag = TAGS.reflections.find((t) => view.has(t))!;
  const prefix = indexTag.slice(0, -1);
  const { loop, column } = view.loop(indexTag)!;
  const [h, k, l] = ['h', 'k', 'l'].map((axis) => column(prefix + axis));
  if (k < 0 || l < 0) fail(`the reflection loop has ${indexTag} but not the k and l indices`, fileName, loop.line);
  const symmetry = TAGS.operations.some((t) => view.loop(t)) || [TAGS.hall, TAGS.hm, TAGS.number].some((tags) => view.item(tags));
  const group = symmetry ? readSymmetry(view, notes) : null;
  const cell = { ...readCell(view, group), ...(group?.number ? { spaceGroup: group.symbol } : {}) };
  const first = (tags: string[]) => tags.map((t) => ({ tag: t, at: column(t) })).find((c) => c.at >= 0);
  const fSquared = first(F_SQUARED);
  const amplitude = fSquared ? undefined : first(F);
  const multiplicity = first(MULTIPLICITY);
  const intensity = fSquared || amplitude ? undefined : first(INTENSITY);
  const dColumn = column(`${prefix.replace(/index_$/, '')}d_spacing`);
  const number = (row: CifValue[], at: number, what: string): number | null => requireCifNumber(row[at], fileName, what)?.value ?? null;
  const reflections: ListedReflection[] = [];
  for (const row of loop.rows) {
    const hkl = [h, k, l].map((c) => number(row, c, 'Miller index'));
    if (hkl.some((v) => v === null || !Number.isInteger(v))) fail(`reflection indices "${[h, k, l].map((c) => row[c].text).join(' ')}" are not whole numbers`, fileName, row[h].line);
    const index = hkl as [number, number, number];
    if (index.every((v) => v === 0)) continue;
    const given = dColumn >= 0 ? number(row, dColumn, 'd-spacing') : null;
    const m = multiplicity ? number(row, multiplicity.at, 'multiplicity') : 1;
    const f = fSquared ? number(row, fSquared.at, '|F|²') : amplitude ? number(row, amplitude.at, '|F|') : null;
    const value = intensity ? number(row, intensity.at, 'intensity') : null;
    if (m === null || (f === null && value === null)) continue;
    reflections.push({
      hkl: index,
      d: given ?? dSpacing(cell, index),
      multiplicity: m,
      fSquared: f === null ? null : amplitude ? f * f : f,
      intensity: value,
    });
  }
  if (reflections.length === 0) fail('the reflection list gives no reflection with a known intensity', fileName, loop.line);
  const formula = cifFormula(view.text(['_chemical_formula_structural']), view.text(['_chemical_formula_sum']));
  const basis = fSquared ? `${fSquared.tag} with ${multiplicity!.tag}` : amplitude ? `${amplitude.tag} squared with ${multiplicity!.tag}` : `${intensity!.tag} as given`;
  return { name: view.text(TAGS.name) ?? formula ?? '', block: block.name, line: block.line, formula, cell, reflections, basis, source: citation(view), notes, fileName };
}

function readBlockStructure(view: BlockView, notes: string[]): CrystalStructure {
  const { block, fileName } = view;
  const spaceGroup = readSymmetry(view, notes);
  const cell = readCell(view, spaceGroup);
  const sites = readSites(view, cell, notes);
  if (sites.length === 0) fail('no atom site with a non-zero occupancy', fileName, block.line);
  const comment = view.text(['_publ_section_comment']);
  if (comment) notes.push(comment);
  const formula = cifFormula(view.text(['_chemical_formula_structural']), view.text(['_chemical_formula_sum']));
  return {
    name: view.text(TAGS.name) ?? formula ?? '',
    block: block.name,
    formula,
    cell: { ...cell, spaceGroup: spaceGroup.number === null ? undefined : spaceGroup.symbol },
    spaceGroup,
    sites,
    source: citation(view),
    notes,
    fileName,
  };
}

/** "data_<name>" of the structure's block, or null for an empty, "?" or "." name. */
function blockLabel(structure: { block?: string }): string | null {
  const name = (structure.block ?? '').trim();
  return name === '' || name === '?' || name === '.' ? null : `data_${name}`;
}

/**
 * Unnamed structures take the file name and block name; a name given twice in one file gets its
 * block name added, so every structure of a file has its own name (and none is "?" or ".").
 */
function nameUniquely(structures: Array<{ name: string; block?: string }>, fileName: string): void {
  const file = baseName(fileName).replace(/\.cif$/i, '');
  for (const s of structures) {
    if (s.name === '') s.name = [file, blockLabel(s)].filter((x) => x !== null).join(' ');
  }
  const counts = new Map<string, number>();
  for (const s of structures) counts.set(s.name.toLowerCase(), (counts.get(s.name.toLowerCase()) ?? 0) + 1);
  for (const s of structures) {
    const label = blockLabel(s);
    if ((counts.get(s.name.toLowerCase()) ?? 0) > 1 && label) s.name = `${s.name} ${label}`;
  }
}

function readSymmetry(view: BlockView, notes: string[]): SpaceGroup {
  const { fileName } = view;
  const opsTag = TAGS.operations.find((tag) => view.loop(tag));
  const hall = view.item(TAGS.hall);
  const hm = view.item(TAGS.hm);
  const number = view.item(TAGS.number);
  if (opsTag) {
    const { loop, column } = view.loop(opsTag)!;
    const col = column(opsTag);
    const ops: SymOp[] = loop.rows.map((row) => parseXyzOperation(row[col].text, { file: fileName, line: row[col].line }));
    const group = closeGroup(ops);
    if (!group) fail('the symmetry operations do not form a space group (more than 192 operations when combined)', fileName, loop.line);
    if (group.length !== ops.length) notes.push(`the ${ops.length} symmetry operations listed were completed to the ${group.length} of their group`);
    const named = hm ?? hall;
    const hints = [hm, hall, number].filter((v): v is CifValue => v !== undefined).map((v) => (v === hall ? `Hall: ${v.text}` : v.text));
    const result = identifySpaceGroup(group, named ? named.text.trim() : 'operations from file', hall ? hall.text.trim() : null, hints);
    if (named && result.number !== null) {
      let byName: SpaceGroup | null = null;
      try {
        byName = getSpaceGroup(named.text);
      } catch {
        byName = null;
      }
      if (byName && byName.number !== result.number) {
        notes.push(`the file names space group "${named.text}" but its operations are those of ${result.symbol}; the operations were used`);
      }
    }
    return result;
  }
  for (const v of [hall ? { value: `Hall: ${hall.text}`, at: hall } : null, hm ? { value: hm.text, at: hm } : null, number ? { value: number.text, at: number } : null]) {
    if (!v) continue;
    const group = getSpaceGroup(v.value, { file: fileName, line: v.at.line });
    if (v.at !== hall && /:[12]$/.test(group.symbol) && !/:/.test(v.value)) {
      notes.push(`space group "${v.value}" has two origin choices and the file lists no operations; origin choice ${group.symbol.slice(-1)} was assumed`);
    }
    return group;
  }
  return fail(
    'no symmetry given: add _space_group_symop_operation_xyz (or _symmetry_equiv_pos_as_xyz) or a space-group name',
    fileName,
    view.block.line,
  );
}

function readCell(view: BlockView, group: SpaceGroup | null): UnitCell {
  const { fileName } = view;
  const [a, b, c] = TAGS.length.map((tag) => {
    const v = view.number([tag], tag);
    if (!v) fail(`the cell is incomplete: ${tag} is missing (data_${view.block.name} starts here)`, fileName, view.block.line);
    return v;
  });
  const [alpha, beta, gamma] = TAGS.angle.map((tag) => {
    const v = view.number([tag], tag);
    if (v) return v;
    const implied = group ? impliedAngle(group, tag) : null;
    if (implied === null) fail(`the cell is incomplete: ${tag} is missing and the crystal system does not fix it`, fileName, view.block.line);
    return { value: implied, line: view.block.line };
  });
  const cell: UnitCell = { a: a.value, b: b.value, c: c.value, alpha: alpha.value, beta: beta.value, gamma: gamma.value };
  checkCell(cell, { file: fileName, line: a.line });
  return cell;
}

/** A cell angle fixed by the crystal system (hexagonal axes for trigonal groups unless ":R"), else null. */
function impliedAngle(group: SpaceGroup, tag: string): number | null {
  const system = group.crystalSystem;
  if (system === null || system === 'triclinic' || system === 'monoclinic' || group.symbol.endsWith(':R')) return null;
  if (system === 'trigonal' || system === 'hexagonal') return tag === '_cell_angle_gamma' ? 120 : 90;
  return 90;
}

/** Element symbol from a type symbol ("Pb2+", "O2-", "CL") or, failing that, a label ("Pb1", "O3a"). */
function elementOf(typeSymbol: string | null, label: string): string | null {
  const known = (s: string): boolean => Object.prototype.hasOwnProperty.call(SCATTERING_FACTORS, s);
  const fromText = (text: string, caseSensitive: boolean): string | null => {
    const m = /^([A-Za-z])([A-Za-z]?)/.exec(text.trim());
    if (!m) return null;
    const first = m[1].toUpperCase();
    const second = m[2].toLowerCase();
    if (second && (!caseSensitive || m[2] === second) && known(first + second)) return first + second;
    if (first === 'D') return 'H';
    return known(first) ? first : null;
  };
  return typeSymbol ? fromText(typeSymbol, false) : fromText(label, true);
}

function readSites(view: BlockView, cell: UnitCell, notes: string[]): AtomSite[] {
  const { fileName } = view;
  const { loop, column } = view.loop('_atom_site_fract_x')!;
  const col = {
    label: column('_atom_site_label'),
    type: column('_atom_site_type_symbol'),
    x: column('_atom_site_fract_x'),
    y: column('_atom_site_fract_y'),
    z: column('_atom_site_fract_z'),
    occupancy: column('_atom_site_occupancy'),
    u: column('_atom_site_u_iso_or_equiv'),
    b: column('_atom_site_b_iso_or_equiv'),
    calc: column('_atom_site_calc_flag'),
  };
  for (const axis of ['y', 'z'] as const) {
    if (col[axis] < 0) fail(`the atom-site loop has no _atom_site_fract_${axis} column`, fileName, loop.line);
  }
  const aniso = readAnisotropic(view, cell);
  const sites: AtomSite[] = [];
  const defaulted: string[] = [];
  loop.rows.forEach((row, index) => {
    const value = (c: number): CifValue | null => (c >= 0 && !(!row[c].quoted && (row[c].text === '?' || row[c].text === '.')) ? row[c] : null);
    const line = row[0].line;
    const label = value(col.label)?.text ?? `site ${index + 1}`;
    if (value(col.calc)?.text.toLowerCase() === 'dum') return;
    const typeSymbol = value(col.type)?.text ?? null;
    const element = elementOf(typeSymbol, label);
    if (!element) {
      fail(`atom site "${label}": element "${typeSymbol ?? label}" is not known; give a chemical element symbol in _atom_site_type_symbol`, fileName, line);
    }
    const coordinate = (c: number, axis: string): number => {
      const v = value(c);
      const parsed = v ? requireCifNumber(v, fileName, `fractional ${axis} of atom site "${label}"`) : null;
      if (!parsed) fail(`atom site "${label}" has no fractional ${axis} coordinate`, fileName, line);
      return parsed.value;
    };
    const occupancyValue = value(col.occupancy);
    const occupancy = occupancyValue ? (requireCifNumber(occupancyValue, fileName, `occupancy of atom site "${label}"`)?.value ?? 1) : 1;
    if (!(occupancy >= 0 && occupancy <= 1 + 1e-6)) fail(`atom site "${label}" has occupancy ${occupancy}; it must lie between 0 and 1`, fileName, line);
    if (occupancy === 0) return;
    let uIso: number | null = null;
    const uValue = value(col.u);
    const bValue = value(col.b);
    if (uValue) uIso = requireCifNumber(uValue, fileName, `U of atom site "${label}"`)?.value ?? null;
    else if (bValue) {
      const b = requireCifNumber(bValue, fileName, `B of atom site "${label}"`)?.value;
      uIso = b === undefined ? null : b / B_PER_U;
    }
    if (uIso === null) uIso = aniso.get(label) ?? null;
    if (uIso === null) {
      uIso = DEFAULT_U;
      defaulted.push(label);
    }
    if (!(uIso >= 0 && uIso < 1)) fail(`atom site "${label}" has displacement U = ${uIso} Å², which is not physical`, fileName, line);
    sites.push({
      label,
      element: element!,
      typeSymbol: typeSymbol ?? element!,
      x: coordinate(col.x, 'x'),
      y: coordinate(col.y, 'y'),
      z: coordinate(col.z, 'z'),
      occupancy,
      uIso,
      line,
    });
  });
  if (defaulted.length > 0) notes.push(`no displacement parameter for ${defaulted.join(', ')}: B = 1 Å² assumed`);
  return sites;
}

/** Ueq by site label from the anisotropic loop (U^ij or B^ij). */
function readAnisotropic(view: BlockView, cell: UnitCell): Map<string, number> {
  const result = new Map<string, number>();
  const found = view.loop('_atom_site_aniso_label');
  if (!found) return result;
  const { loop, column } = found;
  const names = ['11', '22', '33', '12', '13', '23'];
  const uCols = names.map((n) => column(`_atom_site_aniso_u_${n}`));
  const bCols = names.map((n) => column(`_atom_site_aniso_b_${n}`));
  const cols = uCols.every((c) => c >= 0) ? uCols : bCols.every((c) => c >= 0) ? bCols : null;
  if (!cols) return result;
  const scale = cols === uCols ? 1 : 1 / B_PER_U;
  const metric = cellMetric(cell);
  const labelCol = column('_atom_site_aniso_label');
  for (const row of loop.rows) {
    const u = cols.map((c) => requireCifNumber(row[c], view.fileName, `anisotropic displacement of "${row[labelCol].text}"`)?.value);
    if (u.some((v) => v === undefined)) continue;
    result.set(row[labelCol].text, equivalentIsotropicU(metric, u.map((v) => v! * scale)));
  }
  return result;
}

/** A one-line citation from the file's journal and author items. */
function citation(view: BlockView): string {
  const authors = view.loop('_publ_author_name');
  const surname = (name: string): string => (name.includes(',') ? name.split(',')[0] : (name.split(/\s+/).pop() ?? name)).trim();
  const names = authors ? authors.loop.rows.map((r) => surname(r[authors.column('_publ_author_name')].text)) : [];
  const who = names.length === 0 ? '' : names.length === 1 ? names[0] : names.length === 2 ? `${names[0]} & ${names[1]}` : `${names[0]} et al.`;
  const journal = view.text(['_journal_name_full', '_journal_name_abbrev', '_citation_journal_full', '_citation_journal_abbrev']);
  const volume = view.text(['_journal_volume', '_citation_journal_volume']);
  const page = view.text(['_journal_page_first', '_citation_page_first']);
  const year = view.text(['_journal_year', '_citation_year']);
  const parts = [who, journal ? [[journal, volume].filter(Boolean).join(' '), page].filter(Boolean).join(', ') : '', year ? `(${year})` : ''].filter((p) => p !== '');
  const database = view.text(['_database_code_icsd', '_cod_database_code', '_database_code_amcsd']);
  let text = parts.join(', ').replace(/, \(/, ' (');
  if (database) text = text ? `${text}; database code ${database}` : `database code ${database}`;
  const references = view.text(['_publ_section_references']);
  if (!text && references) text = references;
  return text ? `${text} (structure file ${view.fileName})` : `structure file ${view.fileName} (no citation in the file)`;
}
