import type { Command } from 'commander';
import { InputError } from '../../core/errors.js';
import { existsSync } from 'node:fs';
import { checkReferences } from '../../core/library/validate.js';
import { streamReferenceFile } from '../../node/library/import-files.js';
import type { SkippedCifBlock } from '../../core/crystal/structure.js';
import { formatReferenceJson } from '../../core/library/json-format.js';
import type { Reference } from '../../core/model/reference.js';
import { ensureSeeded } from '../../node/library/seed.js';
import { ReferenceLibrary, type ImportSummary, type ReferenceVersionInfo } from '../../node/library/store.js';
import { parseWavelength } from '../../core/model/wavelengths.js';
import { withLibrary, writeFileAtomically } from '../common/io.js';
import { runCommand } from '../common/run-command.js';

/** `crystallog library ...`: import, list, export, remove, history, restore, seed. */
export function registerLibrary(program: Command): void {
  const library = program.command('library').description('The reference library: phases to match against, kept with their history.');

  library
    .command('import')
    .description('Add references from JSON, CSV peak lists or structure CIFs (all files or none).')
    .argument('<files...>', 'reference files (.json, .csv, .cif)')
    .requiredOption('--library <db>', 'library file (created if missing)')
    .option('--wavelength <w>', 'CIF: radiation for computed intensities (default Cu Kα1); CSV: wavelength of a 2θ column')
    .option('--name <name>', 'CSV or CIF: name of the reference (default: the CIF\'s phase name, chemical name or formula, else the file and block name)')
    .option('--source <text>', 'CSV: where the values come from')
    .option('--formula <formula>', 'CSV or CIF: chemical formula as you write it')
    .option('--tag <tag>', 'CSV or CIF: a tag (target, impurity, precursor, decomposition product, standard, or your own); repeat for more', collect, [])
    .option('--json', 'print the result as JSON')
    .action((files: string[], o: ImportOptions) => runCommand(Boolean(o.json), () => importCommand(files, o), importText));

  library
    .command('list')
    .description('List the references (current versions).')
    .requiredOption('--library <db>', 'library file')
    .option('--search <text>', 'part of the name or formula')
    .option('--tag <tag>', 'only references with this tag')
    .option('--json', 'print the result as JSON')
    .action((o: ListOptions) => runCommand(Boolean(o.json), () => listCommand(o), listText));

  library
    .command('export')
    .description('Write the references as a JSON array (the import format) to a file or stdout.')
    .requiredOption('--library <db>', 'library file')
    .option('--out <file>', 'write here instead of stdout (replaced only once fully written)')
    .option('--json', 'with --out: print a JSON summary')
    .action((o: ExportOptions) => {
      if (o.out) return runCommand(Boolean(o.json), () => exportCommand(o), (r) => `Wrote ${r.count} references to ${r.out}\n`);
      return runCommand(false, () => exportCommand(o), (r) => r.text);
    });

  library
    .command('remove')
    .description('Delete a reference (recoverable with restore).')
    .argument('<name>', 'reference name')
    .requiredOption('--library <db>', 'library file')
    .option('--json', 'print the result as JSON')
    .action((name: string, o: LibraryOption) =>
      runCommand(Boolean(o.json), () => removeCommand(name, o), (r) => `Deleted "${r.removed}" (restore it with: library restore "${r.removed}" --version ${r.version})\n`),
    );

  library
    .command('history')
    .description('Show every version of a reference.')
    .argument('<name>', 'reference name')
    .requiredOption('--library <db>', 'library file')
    .option('--json', 'print the result as JSON')
    .action((name: string, o: LibraryOption) => runCommand(Boolean(o.json), () => historyCommand(name, o), historyText));

  library
    .command('restore')
    .description('Make an earlier version current again (also brings back a deleted reference).')
    .argument('<name>', 'reference name')
    .requiredOption('--library <db>', 'library file')
    .requiredOption('--version <n>', 'version to restore')
    .option('--json', 'print the result as JSON')
    .action((name: string, o: LibraryOption & { version: string }) =>
      runCommand(Boolean(o.json), () => restoreCommand(name, o), (r) => `"${r.name}" is now version ${r.version} (a copy of version ${r.restoredFrom})\n`),
    );

  library
    .command('seed')
    .description('Load the references shipped with Crystallog (once per library).')
    .requiredOption('--library <db>', 'library file (created if missing)')
    .option('--json', 'print the result as JSON')
    .action((o: LibraryOption) =>
      runCommand(Boolean(o.json), () => seedCommand(o), (r) => (r.alreadySeeded ? 'Already seeded; nothing done.\n' : `Added ${r.added.length} references.\n`)),
    );
}

function collect(value: string, previous: string[]): string[] {
  return [...previous, value];
}

interface LibraryOption {
  library: string;
  json?: boolean;
}
export interface ImportOptions extends LibraryOption {
  wavelength?: string;
  name?: string;
  source?: string;
  formula?: string;
  tag?: string[];
}
export interface ListOptions extends LibraryOption {
  search?: string;
  tag?: string;
}
export interface ExportOptions extends LibraryOption {
  out?: string;
}

export interface ImportResult extends ImportSummary {
  library: string;
  /** Per file: the names imported, and the CIF data blocks not imported with why (a metadata or pattern block). */
  files: { file: string; references: string[]; skipped: SkippedCifBlock[] }[];
}

/** A structure CIF names its phase and holds no tags: --name and --tag say them, as for a CSV peak list. */
function withCifDetails(file: string, refs: Reference[], o: ImportOptions): Reference[] {
  if (!/\.cif$/i.test(file)) return refs;
  if (o.name !== undefined && refs.length > 1) {
    throw new InputError(`option --name names one reference, but this CIF holds ${refs.length} phases (${refs.map((r) => `"${r.name}"`).join(', ')}); import it without --name`, { file });
  }
  return refs.map((ref) => ({
    ...ref,
    ...(o.name !== undefined ? { name: o.name } : {}),
    ...(o.formula !== undefined ? { formula: o.formula } : {}),
    ...(o.tag !== undefined && o.tag.length > 0 ? { tags: [...new Set([...ref.tags, ...o.tag])] } : {}),
  }));
}

/**
 * Store the references of every file in one transaction, each file read as it is stored (a large JSON
 * file streamed): one bad reference in any file changes nothing, and a library file the import
 * would create is not made (it is built beside and put in place whole, ReferenceLibrary.importIntoNew).
 */
export function importCommand(files: string[], o: ImportOptions): ImportResult {
  const wavelength = o.wavelength === undefined ? undefined : parseWavelength(o.wavelength);
  const csv = {
    ...(o.name !== undefined ? { name: o.name } : {}),
    ...(o.source !== undefined ? { source: o.source } : {}),
    ...(o.formula !== undefined ? { formula: o.formula } : {}),
    ...(o.tag !== undefined && o.tag.length > 0 ? { tags: o.tag } : {}),
  };
  const read = files.map((file) => ({ file, references: [] as string[], skipped: [] as SkippedCifBlock[] }));
  function* references(): Generator<Reference> {
    const from = new Map<string, string>();
    for (const entry of read) {
      const { file } = entry;
      const contents = streamReferenceFile(file, { csv, ...(wavelength ? { wavelength } : {}) });
      // A streamed JSON file's references come checked; a CSV or CIF (read whole) is checked here, as the store would.
      const refs = Array.isArray(contents.references) ? checkReferences(withCifDetails(file, contents.references, o)) : contents.references;
      for (const ref of refs) {
        const earlier = from.get(ref.name.toLowerCase());
        if (earlier) throw new InputError(`the reference "${ref.name}" is also in ${earlier}; import one of them`, { file });
        from.set(ref.name.toLowerCase(), file);
        entry.references.push(ref.name);
        yield ref;
      }
      entry.skipped = contents.skipped;
    }
  }
  const change = `import from ${files.length === 1 ? files[0] : `${files.length} files`}`;
  if (!existsSync(o.library)) {
    const summary = ReferenceLibrary.importIntoNew(o.library, references(), { change });
    if (summary) return { library: o.library, files: read, ...summary };
    // Another process made the file meanwhile: read the files again, into that library.
    for (const entry of read) {
      entry.references = [];
      entry.skipped = [];
    }
  }
  return withLibrary(
    o.library,
    (lib) => {
      const summary = lib.importCheckedReferences(references(), { change });
      return { library: o.library, files: read, ...summary };
    },
    'create',
  );
}

/** Names of what a file brought, in full up to a dozen; a large library is named by its first and last few (the JSON output lists all). */
const NAMES_IN_FULL = 12;
function namesText(names: readonly string[]): string {
  const quoted = (list: readonly string[]) => list.map((n) => `"${n}"`).join(', ');
  if (names.length <= NAMES_IN_FULL) return quoted(names);
  return `${names.length} references: ${quoted(names.slice(0, 3))}, … ${quoted(names.slice(-3))} (--json lists them all)`;
}

function importText(r: ImportResult): string {
  const lines = r.files.flatMap(({ file, references, skipped }) => [
    ...(references.length > 0 ? [`${file}: ${namesText(references)}`] : []),
    ...skipped.map((s) => `${file}: skipped data_${s.block} (line ${s.line}): ${s.reason}`),
  ]);
  const summary = `Imported into ${r.library}: ${r.added.length} added, ${r.updated.length} updated (old versions kept), ${r.unchanged.length} unchanged.`;
  return [...lines, summary].join('\n') + '\n';
}

export interface ListedReference {
  id: number;
  name: string;
  version: number;
  formula: string;
  tags: string[];
  source: string;
  lineCount: number;
  rir: number | null;
  spaceGroup: string | null;
  intensityBasis: string | null;
  createdAt: string;
}

export function listCommand(o: ListOptions): { library: string; count: number; references: ListedReference[] } {
  return withLibrary(o.library, (lib) => {
    const filter = { ...(o.search !== undefined ? { search: o.search } : {}), ...(o.tag !== undefined ? { tag: o.tag } : {}) };
    const references = lib.list(filter).map((r) => ({
      id: r.id,
      name: r.name,
      version: r.version,
      formula: r.formula,
      tags: r.tags,
      source: r.source,
      lineCount: r.lines.length,
      rir: r.rir ?? null,
      spaceGroup: r.cell?.spaceGroup ?? null,
      intensityBasis: r.intensityBasis ?? null,
      createdAt: r.createdAt,
    }));
    return { library: o.library, count: references.length, references };
  });
}

function listText(r: { count: number; references: ListedReference[] }): string {
  const rows = r.references.map((x) => `${x.name}  v${x.version}  ${x.formula || '-'}  [${x.tags.join(', ')}]  ${x.lineCount} lines`);
  return `${rows.join('\n')}${rows.length ? '\n' : ''}${r.count} reference${r.count === 1 ? '' : 's'}\n`;
}

/** The export text; with --out it is written to a temporary file beside the target and renamed over it. */
export function exportCommand(o: ExportOptions): { out: string | null; count: number; text: string } {
  const { text, count } = withLibrary(o.library, (lib) => {
    const refs = lib.exportReferences();
    return { text: formatReferenceJson(refs), count: refs.length };
  });
  if (!o.out) return { out: null, count, text };
  writeFileAtomically(o.out, text);
  return { out: o.out, count, text: '' };
}

export function removeCommand(name: string, o: LibraryOption): { library: string; removed: string; version: number } {
  return withLibrary(o.library, (lib) => {
    const current = lib.get(name);
    if (!current) throw new InputError(`there is no reference named "${name}" in the library`, { file: o.library });
    lib.remove(name);
    return { library: o.library, removed: current.name, version: current.version };
  }, 'write');
}

export function historyCommand(name: string, o: LibraryOption): { library: string; name: string; versions: ReferenceVersionInfo[] } {
  return withLibrary(o.library, (lib) => {
    const versions = lib.history(name);
    return { library: o.library, name: versions[versions.length - 1]!.name, versions };
  });
}

function historyText(r: { name: string; versions: ReferenceVersionInfo[] }): string {
  const rows = r.versions.map(
    (v) => `v${v.version}  ${v.createdAt}  ${v.change}  ${v.lineCount} lines${v.current ? '  (current)' : ''}${v.deleted && v === r.versions.at(-1) ? '  (deleted)' : ''}`,
  );
  return `${r.name}\n${rows.join('\n')}\n`;
}

export function restoreCommand(name: string, o: LibraryOption & { version: string }): { library: string; name: string; version: number; restoredFrom: number } {
  const version = Number(o.version);
  if (!Number.isInteger(version) || version < 1) throw new InputError(`option --version ${o.version}: give a version number (1, 2, ...)`);
  return withLibrary(o.library, (lib) => {
    const restored = lib.restore(name, version);
    return { library: o.library, name: restored.name, version: restored.version, restoredFrom: version };
  }, 'write');
}

function seedCommand(o: LibraryOption): { library: string; added: string[]; alreadySeeded: boolean } {
  return withLibrary(o.library, (lib) => ({ library: o.library, ...ensureSeeded(lib) }), 'create');
}

