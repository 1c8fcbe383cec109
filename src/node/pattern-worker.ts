/**
 * The worker thread of the app's files in progress (app/pattern-jobs.ts): reads one dropped file,
 * hands back a reduced copy of its pattern to draw at once, then analyses it. The app terminates the
 * thread to cancel a file, so a long analysis never has to look for a stop flag.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { analyzePatternWithCurves } from '../core/analysis/analyse.js';
import { isInputError } from '../core/errors.js';
import { decimateMinMax } from '../core/model/decimate.js';
import type { Pattern } from '../core/model/pattern.js';
import type { Wavelength } from '../core/model/wavelengths.js';
import { readPatternBytes } from '../core/pattern/read.js';
import type { AnalysisResult } from '../core/analysis/analyse.js';
import { contextFromShared, type SharedSetup } from './batch.js';

export interface PatternTask {
  jobId: string;
  fileName: string;
  bytes: Uint8Array;
}

/** A pattern reduced for drawing: x and y of the kept points, in index order. */
export interface ReducedPattern {
  x: Float32Array;
  y: Float32Array;
}

export type PatternWorkerMessage =
  | { kind: 'ready' }
  | { kind: 'parsed'; jobId: string; points: number; sha256: string; wavelength: Wavelength | null; preview: ReducedPattern; readMs: number }
  | { kind: 'analysed'; jobId: string; pattern: Pattern; result: AnalysisResult; background: Float32Array; model: Float32Array; analysisMs: number }
  | { kind: 'failed'; jobId: string; stage: 'reading' | 'analysing'; message: string; input: boolean };

/** Columns of the preview: a few times a screen's width, so the chart's own reduction still has points to choose from. */
const PREVIEW_COLUMNS = 4096;

/** The pattern's first, lowest, highest and last point of each of PREVIEW_COLUMNS 2θ columns (all points when fewer). */
function reducePattern(pattern: Pattern, columns = PREVIEW_COLUMNS): ReducedPattern {
  const n = pattern.x.length;
  const low = n ? Math.min(pattern.x[0]!, pattern.x[n - 1]!) : 0;
  const high = n ? Math.max(pattern.x[0]!, pattern.x[n - 1]!) : 0;
  const kept = decimateMinMax(pattern.x, pattern.y, { from: 0, to: n, xLow: low, xHigh: high, buckets: columns });
  const x = new Float32Array(kept.length);
  const y = new Float32Array(kept.length);
  for (let k = 0; k < kept.length; k++) {
    x[k] = pattern.x[kept[k]!]!;
    y[k] = pattern.y[kept[k]!]!;
  }
  return { x, y };
}

const port = parentPort;
if (!port) throw new Error('pattern-worker.js runs only as a worker thread');
const context = contextFromShared(workerData as SharedSetup);

port.on('message', (task: PatternTask) => {
  let stage: 'reading' | 'analysing' = 'reading';
  try {
    let started = performance.now();
    const pattern = readPatternBytes(task.bytes, task.fileName);
    const preview = reducePattern(pattern);
    const parsed: PatternWorkerMessage = { kind: 'parsed', jobId: task.jobId, points: pattern.x.length, sha256: pattern.source.sha256, wavelength: pattern.wavelength, preview, readMs: performance.now() - started };
    port.postMessage(parsed, [preview.x.buffer as ArrayBuffer, preview.y.buffer as ArrayBuffer]);
    stage = 'analysing';
    started = performance.now();
    const { result, curves } = analyzePatternWithCurves(pattern, context);
    const background = Float32Array.from(curves.background);
    const model = Float32Array.from(curves.model);
    // The pattern goes back too (handed over, not copied), so the app draws it without reading the file again.
    const analysed: PatternWorkerMessage = { kind: 'analysed', jobId: task.jobId, pattern, result, background, model, analysisMs: performance.now() - started };
    const buffers = new Set([background.buffer, model.buffer, pattern.x.buffer, pattern.y.buffer, pattern.sigma.buffer] as ArrayBuffer[]);
    port.postMessage(analysed, [...buffers]);
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    port.postMessage({ kind: 'failed', jobId: task.jobId, stage, message, input: isInputError(err) } satisfies PatternWorkerMessage);
  }
});
port.postMessage({ kind: 'ready' } satisfies PatternWorkerMessage);
