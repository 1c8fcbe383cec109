/**
 * Many patterns, one process: a pool of worker threads runs analyzePattern over a file list.
 * The references, their line index and the instrument profile are sent once at start (the index in
 * SharedArrayBuffers, read-only); each worker then reads its files itself and answers with the result
 * already as JSON text, so output is byte-identical whatever the number of workers.
 */
import { availableParallelism } from 'node:os';
import { Worker } from 'node:worker_threads';
import { workerScriptBeside } from './worker-script.js';
import type { StoredReference } from '../core/model/reference.js';
import { packedLinesOf } from './library/packing.js';
import { headsOf, snapshotReferences, snapshotSourceOf, type SnapshotHeads, type SnapshotLines } from './library/stored-references.js';
import { ReferenceLibrary } from './library/store.js';
import { buildReferenceIndex, type ReferenceIndex } from '../core/match/reference-index.js';
import type { InstrumentProfile } from '../core/size/instrument.js';
import { checkTarget, createAnalysisContext, type AnalysisContext, type AnalysisSettings } from '../core/analysis/analyse.js';

/** What a batch needs besides the files. */
export interface BatchSetup {
  references: readonly StoredReference[];
  /** The d-sorted line index over `references`, as the library stores it (built here when absent). */
  index?: ReferenceIndex;
  instrument: InstrumentProfile | null;
  settings: Partial<AnalysisSettings>;
}

/** The outcome of one file: its result as JSON text, or its error. */
export interface BatchFileOutcome {
  /** Position of the file in the input list. */
  index: number;
  file: string;
  json: string | null;
  error: string | null;
  /** 'input': the file (or a setting) is at fault; 'internal': a fault of the program. */
  errorKind: 'input' | 'internal' | null;
}

export interface BatchOptions {
  /** Worker threads (default: the number of cores, at most one per file). */
  workers?: number;
  /** Called as each file finishes (completion order, not input order). */
  onOutcome?: (outcome: BatchFileOutcome) => void;
  /** Keep every result's JSON in the returned list (default true; false when streaming). */
  keepJson?: boolean;
  /** The worker module (default: batch-worker.js beside this module, or its compiled copy in dist/). */
  workerScript?: URL;
}

/**
 * Every reference's lines in shared buffers: Float64 d then intensity per reference (packing.ts) from
 * `valueStart[r]` (in doubles; one more entry marks the end), Int32 h, k, l, multiplicity at
 * `indexStart[r]` (in ints; −1: none).
 */
type SharedLines =
  | { values: SharedArrayBuffer; indices: SharedArrayBuffer; valueStart: Int32Array; indexStart: Int32Array }
  /** Or, for references loaded from a library file with their lines left there: each worker reads the versions it needs from the file. */
  | { library: string; valueStart: Int32Array };

/**
 * The setup as it crosses into a worker: the references' heads as the library snapshot keeps them
 * (one text, made into reference objects only when read) and shared buffers, never a clone of every reference.
 */
export interface SharedSetup {
  heads: SnapshotHeads;
  lines: SharedLines;
  instrument: InstrumentProfile | null;
  settings: Partial<AnalysisSettings>;
  index: { d: SharedArrayBuffer; referenceOf: SharedArrayBuffer; intensity: SharedArrayBuffer; libraryDigest?: string };
}

export interface WorkerTask {
  index: number;
  file: string;
}

/** A worker says it is ready once its context is built, then answers each task with an outcome. */
export type WorkerMessage = { ready: true } | BatchFileOutcome;

/** Files a worker holds at once: the next one waits in its queue while it works on the current one. */
const TASKS_PER_WORKER = 2;

/**
 * One file's failure as the line the batch prints: it names the file (an InputError from a reader names it
 * already; an internal fault or a worker lost on the file does not), and says when the fault is the program's.
 */
export function fileFailure(file: string, message: string, kind: 'input' | 'internal'): string {
  const text = kind === 'internal' ? `internal fault: ${message}` : message;
  return message.includes(file) ? text : `${file}: ${text}`;
}

export function defaultWorkerCount(): number {
  return Math.max(1, availableParallelism());
}

/**
 * Below this many files per extra worker, a second worker costs more to start (0.5–0.8 s CPU each,
 * issue 15) than it saves: a small batch runs on one worker unless more are asked for.
 */
const FILES_PER_EXTRA_WORKER = 16;

/** Workers for a batch of `files` when none are asked for: one for a small batch, else one per core. */
export function workersFor(files: number): number {
  return Math.max(1, Math.min(defaultWorkerCount(), Math.ceil(files / FILES_PER_EXTRA_WORKER)));
}

/** The bytes of a typed array in shared memory: handed over as they are when already there whole (read from the library so), else copied once. */
function shareView(view: ArrayBufferView): SharedArrayBuffer {
  if (view.buffer instanceof SharedArrayBuffer && view.byteOffset === 0 && view.byteLength === view.buffer.byteLength) return view.buffer;
  const buffer = new SharedArrayBuffer(view.byteLength);
  new Uint8Array(buffer).set(new Uint8Array(view.buffer, view.byteOffset, view.byteLength));
  return buffer;
}

/**
 * The references' heads and lines in the form a worker rebuilds them from: a library snapshot's own
 * heads and bytes when the references are that snapshot, else made here reference by reference.
 */
function shareReferences(references: readonly StoredReference[]): Pick<SharedSetup, 'heads' | 'lines'> {
  const source = snapshotSourceOf(references);
  if (source && 'library' in source.lines && source.lines.library !== ':memory:') return { heads: sharedHeads(source.heads), lines: { library: source.lines.library, valueStart: source.valueStart } };
  if (source && 'values' in source.lines) {
    const { values, indices, indexStart } = source.lines;
    return { heads: sharedHeads(source.heads), lines: { values: shareView(values), indices: shareView(indices), valueStart: source.valueStart, indexStart } };
  }
  const n = references.length;
  const packed = references.map(packedLinesOf);
  const valueStart = new Int32Array(n + 1);
  const indexStart = new Int32Array(n);
  let doubles = 0;
  let ints = 0;
  packed.forEach((p, r) => {
    valueStart[r] = doubles;
    doubles += 2 * p.count;
    indexStart[r] = p.indices ? ints : -1;
    if (p.indices) ints += 4 * p.count;
  });
  valueStart[n] = doubles;
  const values = new SharedArrayBuffer(doubles * 8);
  const indices = new SharedArrayBuffer(ints * 4);
  const valueBytes = new Uint8Array(values);
  const indexBytes = new Uint8Array(indices);
  packed.forEach((p, r) => {
    valueBytes.set(p.values, valueStart[r]! * 8);
    if (p.indices) indexBytes.set(p.indices, indexStart[r]! * 4);
  });
  return { heads: sharedHeads(headsOf(references, (r) => packed[r]!.count)), lines: { values, indices, valueStart, indexStart } };
}

/** The heads with their bytes in shared memory (every worker reads the one copy). */
function sharedHeads(heads: SnapshotHeads): SnapshotHeads {
  return { ...heads, bytes: new Uint8Array(shareView(heads.bytes)) };
}

/** Index the references once and put the index and the lines where every worker can read them without a copy. */
export function shareSetup(setup: BatchSetup): SharedSetup {
  const index = setup.index ?? buildReferenceIndex(setup.references);
  return {
    ...shareReferences(setup.references),
    instrument: setup.instrument,
    settings: setup.settings,
    index: { d: shareView(index.d), referenceOf: shareView(index.referenceOf), intensity: shareView(index.intensity), ...(index.libraryDigest ? { libraryDigest: index.libraryDigest } : {}) },
  };
}

/** The analysis context inside a worker, on the shared index and lines. */
export function contextFromShared(shared: SharedSetup): AnalysisContext {
  const shares = shared.lines;
  // A worker reading from the library file keeps its connection for its life (the versions never change).
  const lines: SnapshotLines = 'library' in shares
    ? { ...ReferenceLibrary.openLineReader(shares.library), library: shares.library }
    : { values: Buffer.from(shares.values), indices: Buffer.from(shares.indices), indexStart: shares.indexStart };
  const references = snapshotReferences({ heads: shared.heads, lines, valueStart: shares.valueStart });
  const index: ReferenceIndex = {
    references,
    d: new Float64Array(shared.index.d),
    referenceOf: new Int32Array(shared.index.referenceOf),
    intensity: new Float32Array(shared.index.intensity),
    ...(shared.index.libraryDigest ? { libraryDigest: shared.index.libraryDigest } : {}),
  };
  return createAnalysisContext(references, shared.instrument, shared.settings, index);
}

/**
 * Analyse every file on a pool of worker threads. Resolves with one outcome per file in input order;
 * a bad file gives an outcome with its error and the others go on. Rejects only when the workers
 * cannot start at all.
 */
export function analyzeFiles(files: readonly string[], setup: BatchSetup, options: BatchOptions = {}): Promise<BatchFileOutcome[]> {
  if (files.length === 0) return Promise.resolve([]);
  // Checked here, in the calling thread, so a bad target fails once and not once per file.
  checkTarget(setup.references, setup.settings.target ?? null);
  const shared = shareSetup(setup);
  const poolSize = Math.max(1, Math.min(options.workers ?? workersFor(files.length), files.length));
  const script = options.workerScript ?? workerScriptBeside(import.meta.url, 'batch-worker');
  const keepJson = options.keepJson ?? true;
  const outcomes: BatchFileOutcome[] = new Array(files.length);
  let next = 0;
  let finished = 0;
  const running = new Set<Worker>();

  return new Promise((resolve, reject) => {
    let settled = false;
    const settle = (error: Error | null): void => {
      if (settled) return;
      settled = true;
      for (const worker of running) void worker.terminate();
      running.clear();
      if (error) reject(error);
      else resolve(outcomes);
    };
    const record = (outcome: BatchFileOutcome): void => {
      if (settled) return;
      options.onOutcome?.(outcome);
      outcomes[outcome.index] = keepJson ? outcome : { ...outcome, json: null };
      finished++;
      if (finished === files.length) settle(null);
    };

    const startWorker = (): void => {
      const worker = new Worker(script, { workerData: shared });
      running.add(worker);
      const inFlight = new Set<number>();
      let ready = false;
      let lost = false;
      // A second file waits in a worker's queue only while there are more files left than workers,
      // so no worker sits idle at the end while another still has a file queued.
      const feed = (): void => {
        while (next < files.length && (inFlight.size === 0 || (inFlight.size < TASKS_PER_WORKER && files.length - next > running.size))) {
          const task: WorkerTask = { index: next, file: files[next] };
          next++;
          inFlight.add(task.index);
          worker.postMessage(task);
        }
        if (inFlight.size === 0) {
          running.delete(worker);
          void worker.terminate();
        }
      };
      const onLost = (reason: string): void => {
        if (lost || settled) return;
        lost = true;
        running.delete(worker);
        if (!ready) {
          settle(new Error(`the analysis worker could not start (${script.href}): ${reason}`));
          return;
        }
        for (const index of inFlight) {
          record({ index, file: files[index]!, json: null, error: fileFailure(files[index]!, reason, 'internal'), errorKind: 'internal' });
        }
        inFlight.clear();
        if (next < files.length) startWorker();
      };
      worker.on('message', (message: WorkerMessage) => {
        if ('ready' in message) {
          ready = true;
          feed();
          return;
        }
        const outcome = message;
        inFlight.delete(outcome.index);
        record(outcome);
        if (!settled) feed();
      });
      worker.on('error', (err) => onLost(err.message));
      worker.on('exit', (code) => {
        if (!ready || inFlight.size > 0) onLost(`worker stopped with exit code ${code}`);
      });
      // Files are handed over only once the worker says it is ready, so a fault on a file can never
      // be taken for a worker that failed to start (the two events would otherwise race).
    };

    for (let w = 0; w < poolSize; w++) startWorker();
  });
}
