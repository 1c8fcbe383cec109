import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';

const CLI = join(import.meta.dirname, '..', '..', 'bin', 'crystallog.js');

describe('library import, as read on a terminal', () => {
  it('names a large file’s references by its first and last few, and lists all of them with --json', () => {
    const dir = mkdtempSync(join(tmpdir(), 'crystallog-import-text-'));
    const refs = Array.from({ length: 40 }, (_, i) => ({ name: `phase ${String(i).padStart(2, '0')}`, source: 'made up for this test', lines: [{ d: 3 + i / 100, intensity: 100 }] }));
    const file = join(dir, 'many.json');
    writeFileSync(file, JSON.stringify(refs));
    const text = spawnSync(process.execPath, [CLI, 'library', 'import', file, '--library', join(dir, 'a.db')], { encoding: 'utf8' });
    expect(text.status).toBe(0);
    expect(text.stdout).toContain('many.json: 40 references: "phase 00", "phase 01", "phase 02", … "phase 37", "phase 38", "phase 39" (--json lists them all)');
    expect(text.stdout).toContain('Imported into');
    const json = spawnSync(process.execPath, [CLI, 'library', 'import', file, '--library', join(dir, 'b.db'), '--json'], { encoding: 'utf8' });
    expect(json.status).toBe(0);
    expect(JSON.parse(json.stdout).files[0].references).toHaveLength(40);
  });
});
