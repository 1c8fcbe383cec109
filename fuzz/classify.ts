/**
 * The property every input must hold, in process: reading then analysing it (the code path of
 * `crystallog peaks`, `match`, `size` and `analyze`: readPatternBytes → analyzePattern) either gives a
 * result, or refuses with an InputError that names the file; anything else is a crash.
 */
import { analyzePattern, createAnalysisContext, type AnalysisContext } from '../src/core/analysis/analyse.js';
import { InputError } from '../src/core/errors.js';
import { checkReferences } from '../src/core/library/validate.js';
import { parseReferenceJson } from '../src/core/library/json-format.js';
import type { StoredReference } from '../src/core/model/reference.js';
import { readPatternBytes } from '../src/core/pattern/read.js';

export type Outcome =
  | { kind: 'ok'; peaks: number }
  | { kind: 'refused'; message: string; line: number | null }
  /** An InputError that does not name the file it is about. */
  | { kind: 'unnamed'; message: string }
  /** A result that breaks the output contract (a non-finite position, for one). */
  | { kind: 'invalid'; message: string }
  | { kind: 'crash'; message: string; stack: string };

/** The analysis context of a fuzz run, from reference JSON texts (the examples' references and silicon). */
export function fuzzContext(referenceTexts: ReadonlyArray<{ name: string; text: string }>): AnalysisContext {
  const references: StoredReference[] = referenceTexts
    .flatMap(({ name, text }) => checkReferences(parseReferenceJson(text, name)))
    .map((ref, i) => ({ ...ref, id: i + 1, version: 1, createdAt: '2026-01-01T00:00:00.000Z' }));
  return createAnalysisContext(references, null, {});
}

export function classify(bytes: Uint8Array, fileName: string, context: AnalysisContext): Outcome {
  let json: string;
  let peaks: number;
  try {
    const result = analyzePattern(readPatternBytes(bytes, fileName), context);
    peaks = result.peaks.length;
    json = JSON.stringify(result);
    for (const p of result.peaks) {
      if (!Number.isFinite(p.twoTheta) || !Number.isFinite(p.height) || !Number.isFinite(p.fwhm)) {
        return { kind: 'invalid', message: `peak with non-finite fields: ${JSON.stringify(p).slice(0, 200)}` };
      }
    }
  } catch (err) {
    if (err instanceof InputError) {
      if (err.file !== fileName || !err.message.includes(fileName)) return { kind: 'unnamed', message: err.message };
      return { kind: 'refused', message: err.message, line: err.line ?? null };
    }
    const error = err instanceof Error ? err : new Error(String(err));
    return { kind: 'crash', message: `${error.name}: ${error.message}`, stack: error.stack ?? '' };
  }
  if (json.length === 0) return { kind: 'invalid', message: 'empty result' };
  return { kind: 'ok', peaks };
}
