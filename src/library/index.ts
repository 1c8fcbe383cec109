/** The reference library: model, store, file formats, seed references. */
export * from './reference.js';
export { ReferenceLibrary, lineArrays, type ImportSummary, type ListFilter, type OpenLibraryOptions, type ReferenceVersionInfo } from './store.js';
export { parseReferenceJson, formatReferenceJson, toFileEntry } from './json-format.js';
export { parseReferenceCsv, type CsvReferenceMeta } from './csv-format.js';
export { parseReferenceFile, readReferenceFile, referenceFileKind, type ReferenceFileOptions } from './import-files.js';
export { referenceFromCif, positionsFromCell } from './from-crystal.js';
export { referenceFromPeaks, type MeasuredReferenceMeta } from './from-peaks.js';
export { ensureSeeded, loadSeedReferences, seedFolder, packageRoot, type SeedResult } from './seed.js';
