import Database from 'better-sqlite3';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ProjectStore } from '../../src/node/project-store.js';
import { InputError } from '../../src/core/errors.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { useTempDir } from './helpers.js';

const tempDir = useTempDir();

describe('the project file', () => {
  it('keeps a raw file byte for byte with its SHA-256, label, variant and exposure time', () => {
    const path = join(tempDir(), 'project.sqlite');
    const store = ProjectStore.open(path);
    const bytes = new TextEncoder().encode('abc');
    const sample = store.addSample({ fileName: 'batch7-washed.xy', bytes, label: 'batch 7', variant: 'washed', exposureHours: 2.5 });
    // SHA-256("abc"): FIPS 180-2, Appendix B.1 example.
    expect(sample.sha256).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
    expect(sample).toMatchObject({ fileName: 'batch7-washed.xy', byteLength: 3, label: 'batch 7', variant: 'washed', exposureHours: 2.5 });
    store.close();

    const again = ProjectStore.open(path);
    expect(Array.from(again.getSampleBytes(sample.id))).toEqual(Array.from(bytes));
    expect(again.listSamples()).toEqual([sample]);
    expect(again.findSamplesBySha256(sample.sha256).map((s) => s.id)).toEqual([sample.id]);
    expect(again.updateSample(sample.id, { exposureHours: 24 }).exposureHours).toBe(24);
    expect(() => again.addSample({ fileName: 'x.xy', bytes, exposureHours: -1 })).toThrow(InputError);
    again.close();
  });

  it('notices stored bytes that no longer match their checksum', () => {
    const path = join(tempDir(), 'project.sqlite');
    const store = ProjectStore.open(path);
    const { id } = store.addSample({ fileName: 'a.xy', bytes: new Uint8Array([1, 2, 3]) });
    const raw = new Database(path);
    raw.prepare('UPDATE sample SET bytes = ? WHERE id = ?').run(Buffer.from([1, 2, 4]), id);
    raw.close();
    expect(() => store.getSampleBytes(id)).toThrow(/no longer match their SHA-256/);
    store.close();
  });

  it('saves settings and results with the reference versions used, keeping every saved result', () => {
    const dir = tempDir();
    const lib = ReferenceLibrary.open(join(dir, 'refs.sqlite'));
    lib.importReferences([{ name: 'target phase', formula: 'X', tags: ['target'], source: 'test', lines: [{ d: 3, intensity: 100 }] }]);
    const used = lib.get('target phase')!;
    lib.close();

    const store = ProjectStore.open(join(dir, 'project.sqlite'));
    expect(store.getSettings()).toEqual({});
    store.setSettings({ wavelength: 'Cu', toleranceDeg: 0.1 });
    expect(store.getSettings()).toEqual({ wavelength: 'Cu', toleranceDeg: 0.1 });

    const { id } = store.addSample({ fileName: 'a.xy', bytes: new Uint8Array([1]) });
    store.saveResult(id, { verdict: 'uncertain', background: new Float64Array([1.5, 2]) }, [used]);
    const second = store.saveResult(id, { verdict: 'present' }, [used]);
    const latest = store.latestResult(id)!;
    expect(latest.result).toEqual({ verdict: 'present' });
    expect(latest.referencesUsed).toEqual([{ id: used.id, version: 1, name: 'target phase' }]);
    expect(latest.id).toBe(second.id);
    expect(store.resultHistory(id).map((r) => r.result)).toEqual([{ verdict: 'uncertain', background: [1.5, 2] }, { verdict: 'present' }]);
    expect(() => store.saveResult(999, {})).toThrow(/no sample 999/);
    store.removeSample(id);
    expect(store.latestResult(id)).toBeNull();
    store.close();
  });

  it('will not open a reference library as a project, nor a project as a library', () => {
    const dir = tempDir();
    ReferenceLibrary.open(join(dir, 'refs.sqlite')).close();
    ProjectStore.open(join(dir, 'project.sqlite')).close();
    expect(() => ProjectStore.open(join(dir, 'refs.sqlite'))).toThrow(/reference-library file, not a project file/);
    expect(() => ReferenceLibrary.open(join(dir, 'project.sqlite'))).toThrow(/project file, not a reference-library file/);
  });
});
