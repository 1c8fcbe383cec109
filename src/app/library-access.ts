/**
 * The app's reference library: opened (and seeded) on first use, with the edits the screens make,
 * and the digest of its state that tells whether a saved analysis used the library as it is now.
 */
import { libraryDigest } from '../core/analysis/analyse.js';
import { positionsFromCell } from '../core/library/from-crystal.js';
import type { Reference, StoredReference } from '../core/model/reference.js';
import { twoThetaFromD } from '../core/model/units.js';
import type { ReferenceLinesView } from '../api/contract.js';
import { parseReferenceFile } from '../node/library/import-files.js';
import { ensureSeeded } from '../node/library/seed.js';
import { ReferenceLibrary } from '../node/library/store.js';

export class LibraryAccess {
  private handle: ReferenceLibrary | null = null;
  private references: StoredReference[] | null = null;
  private digestOfAll: string | null = null;

  /** `onChange` runs after every change made through this object (the analysis rebuilds its index). */
  constructor(
    private readonly file: string,
    private readonly onChange: () => void,
  ) {}

  store(): ReferenceLibrary {
    if (!this.handle) {
      this.handle = ReferenceLibrary.open(this.file);
      ensureSeeded(this.handle);
    }
    return this.handle;
  }

  /** Every current reference (read once per library state). */
  all(): StoredReference[] {
    this.references ??= this.store().all();
    return this.references;
  }

  /** Digest over names and versions, as recorded in each analysis result. */
  digest(): string {
    this.digestOfAll ??= libraryDigest(this.all());
    return this.digestOfAll;
  }

  /** Call after any change to the library, including changes made through `store()`. */
  changed(): void {
    this.references = null;
    this.digestOfAll = null;
    this.onChange();
  }

  importFile(fileName: string, text: string): { imported: string[]; updated: string[] } {
    const summary = this.store().importReferences(parseReferenceFile(text, fileName));
    this.changed();
    return { imported: summary.added, updated: [...summary.updated, ...summary.unchanged] };
  }

  save(ref: Reference): StoredReference {
    const library = this.store();
    library.importReferences([ref], { change: library.exists(ref.name) ? 'edit' : 'import' });
    this.changed();
    return library.get(ref.name)!;
  }

  fromCell(input: { name: string; formula: string; cell: NonNullable<Reference['cell']>; tags: string[]; source: string }): StoredReference {
    const computed = positionsFromCell(input.cell, { name: input.name });
    return this.save({ ...computed, name: input.name, formula: input.formula, tags: input.tags, source: input.source, cell: input.cell });
  }

  /** The lines of the named references at a wavelength, for drawing under a pattern. */
  lines(names: string[], lambdaAngstrom: number): ReferenceLinesView[] {
    const out: ReferenceLinesView[] = [];
    for (const name of names) {
      const ref = this.store().get(name);
      if (!ref) continue;
      out.push({
        name: ref.name,
        version: ref.version,
        lines: ref.lines
          .map((l) => ({ twoTheta: twoThetaFromD(l.d, lambdaAngstrom), d: l.d, intensity: l.intensity, hkl: l.hkl ?? null }))
          .filter((l) => Number.isFinite(l.twoTheta)),
      });
    }
    return out;
  }

  close(): void {
    this.handle?.close();
    this.handle = null;
    this.references = null;
    this.digestOfAll = null;
  }
}
