/**
 * Files in progress in the app: each dropped file is read and analysed on a worker thread, so the
 * engine keeps answering (the page's Cancel among others) while a 2 M-line file is worked on. The
 * file's reduced pattern comes back as soon as it is read; its analysis follows. Cancel terminates
 * the thread at once (no stop flag to wait for) and a fresh one takes the next file; nothing of a
 * cancelled file is kept, since the project is written only when an analysis is complete.
 */
import { Worker } from 'node:worker_threads';
import { InputError } from '../core/errors.js';
import { shareSetup, type BatchSetup, type SharedSetup } from '../node/batch.js';
import type { PatternTask, PatternWorkerMessage } from '../node/pattern-worker.js';
import { workerScriptBeside } from '../node/worker-script.js';

type Parsed = Extract<PatternWorkerMessage, { kind: 'parsed' }>;
type Analysed = Extract<PatternWorkerMessage, { kind: 'analysed' }>;

/** The end of a file's analysis: done, or refused with the sentence of an InputError (the file is then still kept). */
export type AnalysisOutcome = { ok: true; analysed: Analysed } | { ok: false; problem: string };

interface Job {
  task: PatternTask;
  /** The file's SHA-256, once read. */
  sha256: string;
  parsed: Deferred<Parsed>;
  analysed: Deferred<AnalysisOutcome>;
}

interface Deferred<T> {
  promise: Promise<T>;
  resolve(value: T): void;
  reject(err: Error): void;
}

function deferred<T>(): Deferred<T> {
  let resolve!: (value: T) => void;
  let reject!: (err: Error) => void;
  const promise = new Promise<T>((res, rej) => {
    resolve = res;
    reject = rej;
  });
  // A job cancelled before anyone asked for its analysis must not count as an unhandled rejection.
  promise.catch(() => {});
  return { promise, resolve, reject };
}

/** Cancelled ids remembered, so a file whose Cancel came before its bytes is refused when they arrive. */
const REMEMBERED_CANCELS = 64;
/** Files read but never collected (a page closed mid-file) are dropped beyond this many. */
const MAX_UNCOLLECTED = 4;

export class PatternJobs {
  private worker: Worker | null = null;
  private workerKey: string | null = null;
  private setup: { key: string; shared: SharedSetup } | null = null;
  private readonly queue: Job[] = [];
  private running: Job | null = null;
  private readonly finished = new Map<string, Job>();
  private readonly cancelled: string[] = [];

  /** `setupOf` gives the analysis set-up now and a key that changes whenever the set-up does. */
  constructor(private readonly setupOf: () => { key: string; setup: () => BatchSetup }) {}

  /** Start reading and analysing a file; resolves with its reduced pattern once it is read. */
  start(task: PatternTask): Promise<Parsed> {
    if (this.cancelled.includes(task.jobId)) throw new InputError(`${task.fileName} was cancelled`);
    if (this.find(task.jobId)) throw new InputError(`${task.fileName} is already in progress`);
    const job: Job = { task, sha256: '', parsed: deferred(), analysed: deferred() };
    this.queue.push(job);
    this.pump();
    return job.parsed.promise;
  }

  /** The file's analysis; the job is forgotten once it is collected. */
  async collect(jobId: string): Promise<{ task: PatternTask; sha256: string; outcome: AnalysisOutcome }> {
    const job = this.find(jobId);
    if (!job) throw new InputError(this.cancelled.includes(jobId) ? 'the file was cancelled' : 'there is no file in progress by that id; add the file again');
    const outcome = await job.analysed.promise;
    this.finished.delete(jobId);
    return { task: job.task, sha256: job.sha256, outcome };
  }

  /** Where a file in progress is: waiting its turn, being read, being analysed, analysed; null when unknown. */
  stageOf(jobId: string): 'waiting' | 'reading' | 'analysing' | 'analysed' | null {
    if (this.finished.has(jobId)) return 'analysed';
    if (this.running?.task.jobId === jobId) return this.running.sha256 ? 'analysing' : 'reading';
    return this.queue.some((j) => j.task.jobId === jobId) ? 'waiting' : null;
  }

  /** Stop a file wherever it is: queued, being read or analysed (its thread terminated), or read and waiting. */
  cancel(jobId: string): boolean {
    this.cancelled.push(jobId);
    if (this.cancelled.length > REMEMBERED_CANCELS) this.cancelled.shift();
    const cancelledError = (job: Job): InputError => new InputError(`${job.task.fileName} was cancelled; it was not added`);
    const queued = this.queue.findIndex((j) => j.task.jobId === jobId);
    if (queued >= 0) {
      const [job] = this.queue.splice(queued, 1);
      job!.parsed.reject(cancelledError(job!));
      job!.analysed.reject(cancelledError(job!));
      return true;
    }
    if (this.running?.task.jobId === jobId) {
      const job = this.running;
      this.running = null;
      this.stopWorker();
      job.parsed.reject(cancelledError(job));
      job.analysed.reject(cancelledError(job));
      this.pump();
      return true;
    }
    const waiting = this.finished.get(jobId);
    if (waiting) {
      this.finished.delete(jobId);
      return true;
    }
    return false;
  }

  close(): void {
    for (const job of [...this.queue, ...(this.running ? [this.running] : [])]) {
      job.parsed.reject(new InputError('the project was closed'));
      job.analysed.reject(new InputError('the project was closed'));
    }
    this.queue.length = 0;
    this.running = null;
    this.finished.clear();
    this.stopWorker();
  }

  /** Start a worker ahead of the first file, so the first drop does not wait for one to load. */
  warm(): void {
    if (!this.worker) this.ensureWorker();
  }

  private find(jobId: string): Job | undefined {
    return this.finished.get(jobId) ?? (this.running?.task.jobId === jobId ? this.running : this.queue.find((j) => j.task.jobId === jobId));
  }

  private pump(): void {
    if (this.running) return;
    if (this.queue.length === 0) return void this.worker?.unref();
    const job = this.queue.shift()!;
    let worker: Worker;
    try {
      worker = this.ensureWorker();
    } catch (err) {
      job.parsed.reject(err as Error);
      job.analysed.reject(err as Error);
      return this.pump();
    }
    this.running = job;
    // A worker at work keeps the process alive; an idle one does not.
    worker.ref();
    // The bytes are handed over (transferred), not copied: the job keeps its own copy for the project.
    const bytes = new Uint8Array(job.task.bytes);
    worker.postMessage({ ...job.task, bytes } satisfies PatternTask, [bytes.buffer as ArrayBuffer]);
  }

  private ensureWorker(): Worker {
    const { key, setup } = this.setupOf();
    if (this.worker && this.workerKey === key) return this.worker;
    this.stopWorker();
    if (this.setup?.key !== key) this.setup = { key, shared: shareSetup(setup()) };
    const worker = new Worker(workerScriptBeside(import.meta.url, '../node/pattern-worker'), { workerData: this.setup.shared });
    worker.on('message', (message: PatternWorkerMessage) => this.onMessage(worker, message));
    worker.on('error', (err) => this.onLost(worker, err.message));
    worker.on('exit', (code) => this.onLost(worker, `its thread ended with code ${code}`));
    // An idle worker must not keep the engine's process alive.
    worker.unref();
    this.worker = worker;
    this.workerKey = key;
    return worker;
  }

  private stopWorker(): void {
    const worker = this.worker;
    this.worker = null;
    this.workerKey = null;
    if (worker) void worker.terminate();
  }

  private onMessage(worker: Worker, message: PatternWorkerMessage): void {
    const job = this.running;
    if (worker !== this.worker || message.kind === 'ready' || !job || job.task.jobId !== message.jobId) return;
    if (message.kind === 'parsed') {
      job.sha256 = message.sha256;
      return job.parsed.resolve(message);
    }
    this.running = null;
    if (message.kind === 'analysed') {
      this.keepFinished(job);
      job.analysed.resolve({ ok: true, analysed: message });
    } else if (message.stage === 'analysing' && message.input) {
      this.keepFinished(job);
      job.analysed.resolve({ ok: false, problem: message.message });
    } else {
      const err = message.input ? new InputError(message.message) : new Error(message.message);
      job.parsed.reject(err);
      job.analysed.reject(err);
    }
    this.pump();
  }

  private keepFinished(job: Job): void {
    this.finished.set(job.task.jobId, job);
    while (this.finished.size > MAX_UNCOLLECTED) this.finished.delete(this.finished.keys().next().value!);
  }

  /** The worker died on its own (a fault, or out of memory): the file it held fails, the next gets a new worker. */
  private onLost(worker: Worker, why: string): void {
    if (worker !== this.worker) return;
    this.worker = null;
    this.workerKey = null;
    const job = this.running;
    this.running = null;
    if (job) {
      const err = new Error(`the analysis thread stopped (${why})`);
      job.parsed.reject(err);
      job.analysed.reject(err);
    }
    this.pump();
  }
}
