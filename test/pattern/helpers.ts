import { expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { InputError } from '../../src/core/errors.js';
import { readPatternBytes } from '../../src/core/pattern/read.js';
import type { Pattern } from '../../src/core/model/pattern.js';

export const fixturePath = (name: string): string => fileURLToPath(new URL(`../fixtures/patterns/${name}`, import.meta.url));
export const fixtureText = (name: string): string => readFileSync(fixturePath(name), 'utf8');

export function readText(text: string, fileName = 'pattern.xy'): Pattern {
  return readPatternBytes(new TextEncoder().encode(text), fileName);
}

/** The InputError that reading this text throws (fails the test if it throws anything else or nothing). */
export function readError(text: string | Uint8Array, fileName = 'pattern.xy'): InputError {
  const bytes = typeof text === 'string' ? new TextEncoder().encode(text) : text;
  try {
    readPatternBytes(bytes, fileName);
  } catch (err) {
    expect(err).toBeInstanceOf(InputError);
    const inputError = err as InputError;
    expect(inputError.file).toBe(fileName);
    expect(inputError.message.startsWith(fileName)).toBe(true);
    return inputError;
  }
  throw new Error('expected an InputError');
}

/** Rows "x y" of n points with a step, as text. */
export function rows(n: number, options: { start?: number; step?: number; separator?: string; y?: (i: number) => number } = {}): string {
  const { start = 10, step = 0.02, separator = ' ', y = (i) => 100 + i } = options;
  const out: string[] = [];
  for (let i = 0; i < n; i++) out.push(`${(start + i * step).toFixed(2)}${separator}${y(i)}`);
  return out.join('\n') + '\n';
}

/** The invariants every Pattern from a reader must hold. */
export function expectValidPattern(p: Pattern): void {
  const n = p.x.length;
  expect(n).toBeGreaterThanOrEqual(5);
  expect(p.y.length).toBe(n);
  expect(p.sigma.length).toBe(n);
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(p.x[i]) || !Number.isFinite(p.y[i]) || !(p.sigma[i] > 0) || !Number.isFinite(p.sigma[i])) {
      throw new Error(`point ${i} not finite: ${p.x[i]} ${p.y[i]} ${p.sigma[i]}`);
    }
    if (i > 0 && !(p.x[i] > p.x[i - 1])) throw new Error(`x not increasing at ${i}: ${p.x[i - 1]} ${p.x[i]}`);
  }
}
