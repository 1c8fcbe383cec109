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
  // 3: every current line in one d-sorted table (packed typed arrays), kept at import time so that
  // matching loads it in one read; `digest` is the library digest (names and versions) it was built for.
  (db) => {
    db.exec(`
      CREATE TABLE line_index (
        id INTEGER PRIMARY KEY CHECK (id = 1),
        digest TEXT NOT NULL,
        reference_count INTEGER NOT NULL,
        d BLOB NOT NULL,             -- Float64, ascending, Å
        reference_of BLOB NOT NULL,  -- Int32, position of the line's reference in the name-sorted list
        intensity BLOB NOT NULL      -- Float32, relative intensity (unknown counted as in reference-index.ts)
      ) STRICT;
    `);
  },
];

export const LIBRARY_KIND = 'reference-library';
