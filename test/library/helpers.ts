import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach } from 'vitest';
import type { Reference } from '../../src/core/model/reference.js';

/** A fresh temporary folder, removed after the test. */
export function useTempDir(): () => string {
  const made: string[] = [];
  afterEach(() => {
    for (const dir of made.splice(0)) rmSync(dir, { recursive: true, force: true });
  });
  return () => {
    const dir = mkdtempSync(join(tmpdir(), 'crystallog-library-'));
    made.push(dir);
    return dir;
  };
}

/**
 * Silicon, cubic a = 5.43159 Å (NIST SRM 640d, Black et al., Powder Diffraction 25, 187 (2010)):
 * d = a/√(h²+k²+l²). Intensities are round illustrative numbers (not from a source).
 */
export function silicon(overrides: Partial<Reference> = {}): Reference {
  const a = 5.43159;
  const lines = (
    [
      [[1, 1, 1], 100, 8],
      [[2, 2, 0], 55, 12],
      [[3, 1, 1], 30, 24],
      [[4, 0, 0], 6, 6],
    ] as const
  ).map(([hkl, intensity, multiplicity]) => ({
    d: a / Math.hypot(...hkl),
    intensity,
    hkl: [...hkl] as [number, number, number],
    multiplicity,
  }));
  return {
    name: 'silicon',
    formula: 'Si',
    tags: ['standard'],
    source: 'NIST SRM 640d lattice parameter; intensities illustrative',
    cell: { a, b: a, c: a, alpha: 90, beta: 90, gamma: 90, spaceGroup: 'F d -3 m' },
    lines,
    ...overrides,
  };
}

/** A synthetic phase with n lines (positions only matter for storage tests). */
export function syntheticPhase(name: string, n = 30, tags: string[] = []): Reference {
  const lines = Array.from({ length: n }, (_, i) => ({ d: 10 / (1 + 0.1 * i), intensity: i === 0 ? 100 : ((i * 37) % 100) }));
  return { name, formula: 'X', tags, source: 'synthetic test data', lines };
}
