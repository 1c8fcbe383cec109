import { CREATE_META_TABLE, type Migration } from './sqlite.js';

/**
 * The reference library's schema, one step per schema version (PRAGMA user_version).
 * Append new steps; never edit a step that has shipped.
 */
export const LIBRARY_MIGRATIONS: readonly Migration[] = [
  // 1: references by name, each with its versions (nothing is overwritten; delete is a mark).
  (db) => {
    db.exec(`
      ${CREATE_META_TABLE};
      CREATE TABLE reference_entry (
        id INTEGER PRIMARY KEY,
        name TEXT NOT NULL COLLATE NOCASE UNIQUE,
        current_version INTEGER NOT NULL,
        deleted_at TEXT,
        FOREIGN KEY (id, current_version) REFERENCES reference_version (entry_id, version) DEFERRABLE INITIALLY DEFERRED
      ) STRICT;
      CREATE TABLE reference_version (
        entry_id INTEGER NOT NULL REFERENCES reference_entry (id),
        version INTEGER NOT NULL CHECK (version >= 1),
        name TEXT NOT NULL CHECK (length(trim(name)) > 0),
        source TEXT NOT NULL CHECK (length(trim(source)) > 0),
        details TEXT NOT NULL CHECK (json_valid(details)), -- formula, tags, notes, rir, cell, intensityBasis
        line_count INTEGER NOT NULL CHECK (line_count >= 0),
        line_values BLOB NOT NULL,          -- Float64: d[0..n) then intensity[n..2n), NaN = unknown
        line_indices BLOB,                  -- Int32: h, k, l, multiplicity per line, or NULL
        content_hash TEXT NOT NULL,
        change TEXT NOT NULL,               -- what made this version: import, edit, restore, seed
        created_at TEXT NOT NULL,
        PRIMARY KEY (entry_id, version)
      ) STRICT;
    `);
  },
  // 2: search helpers kept with the current version: its formula beside the name, its tags in their own table.
  (db) => {
    db.exec(`
      ALTER TABLE reference_entry ADD COLUMN formula TEXT NOT NULL DEFAULT '';
      UPDATE reference_entry SET formula = coalesce((SELECT v.details ->> '$.formula' FROM reference_version v
        WHERE v.entry_id = reference_entry.id AND v.version = reference_entry.current_version), '');
      CREATE TABLE reference_tag (
        entry_id INTEGER NOT NULL REFERENCES reference_entry (id),
        tag TEXT NOT NULL COLLATE NOCASE,
        PRIMARY KEY (entry_id, tag)
      ) STRICT, WITHOUT ROWID;
      CREATE INDEX reference_tag_by_tag ON reference_tag (tag, entry_id);
      INSERT OR IGNORE INTO reference_tag (entry_id, tag)
        SELECT e.id, j.value FROM reference_entry e
        JOIN reference_version v ON v.entry_id = e.id AND v.version = e.current_version, json_each(v.details, '$.tags') j;
    `);
  },
  // 3: a snapshot of the current references for matching, kept in the same transaction as every
  // change (an import rebuilds it, other changes drop it until the next read rebuilds it): their heads
  // as one JSON array, their packed lines end to end, and every line in one d-sorted table, so that
  // `match` loads the whole library in one read. `stamp` is the library state it was made from.
  (db) => {
    db.exec(`
      CREATE TABLE line_index (
        id INTEGER PRIMARY KEY CHECK (id = 1),
        stamp TEXT NOT NULL,
        digest TEXT NOT NULL,        -- the library digest (names and versions, analyse.ts)
        heads TEXT NOT NULL CHECK (json_valid(heads)), -- [id, version, name, source, details, created_at, line_count] per reference, name order
        line_values BLOB NOT NULL,   -- each reference's packed line values (packing.ts), end to end
        line_indices BLOB NOT NULL,  -- each reference's packed h, k, l, multiplicity, end to end (none: nothing)
        index_start BLOB NOT NULL,   -- Int32 per reference: its first Int32 in line_indices, or -1 when it has none
        d BLOB NOT NULL,             -- Float64, ascending, Å
        reference_of BLOB NOT NULL,  -- Int32, position of the line's reference in heads
        intensity BLOB NOT NULL      -- Float32, relative intensity (unknown counted as in reference-index.ts)
      ) STRICT;
    `);
  },
  // 4: the snapshot's byte arrays in parts of at most 8 MB, one row each: SQLite copies a value whole
  // when it binds it and again when it builds the row, so one 130 MB row cost an import of 100 000
  // references about 350 MB at its peak. The snapshot is a cache: the old one is dropped and made anew.
  (db) => {
    db.exec(`
      DROP TABLE line_index;
      CREATE TABLE line_index (
        id INTEGER PRIMARY KEY CHECK (id = 1),
        stamp TEXT NOT NULL,
        digest TEXT NOT NULL,        -- the library digest (names and versions, analyse.ts)
        heads TEXT NOT NULL          -- [id, version, name, source, details, created_at, line_count] per reference, name order (JSON)
      ) STRICT;
      CREATE TABLE line_index_part (
        array TEXT NOT NULL,         -- which array: line_values, line_indices, index_start, d, reference_of, intensity (as in step 3)
        part INTEGER NOT NULL,       -- its parts in order, from 0
        bytes BLOB NOT NULL,
        PRIMARY KEY (array, part)
      ) STRICT;
    `);
  },
  // 5: the snapshot's heads become UTF-8 bytes (part heads) with where each starts (part head_start),
  // and where each reference's lines start in line_values (part value_start), so that loading it
  // decodes no head until its reference is read; its names, tags and solid-solution partners are kept
  // beside them for lookups that would otherwise read every head. The snapshot is a cache: the old one is dropped.
  (db) => {
    db.exec(`
      DROP TABLE line_index;
      DELETE FROM line_index_part;
      CREATE TABLE line_index (
        id INTEGER PRIMARY KEY CHECK (id = 1),
        stamp TEXT NOT NULL,
        digest TEXT NOT NULL,        -- the library digest (names and versions, analyse.ts)
        names TEXT NOT NULL,         -- the references' names in name order (JSON); their heads are in line_index_part
        tagged TEXT NOT NULL,        -- {tag: [positions]}: which of them carry each tag (JSON)
        partners TEXT NOT NULL       -- solid-solution partners, [[position, [positions]], ...] (solid-solution.ts; JSON)
      ) STRICT;
    `);
  },
];

export const LIBRARY_KIND = 'reference-library';
