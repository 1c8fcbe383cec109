/**
 * A sample's detail with its curves decoded. A long pattern's detail is tens of MB of JSON and
 * base64: it is fetched, parsed and decoded on a worker of the page (decode-worker.ts), so the page's
 * thread only receives the finished arrays (handed over, not copied) and never freezes on them.
 */
import type { SampleDetail } from '../../src/api/contract.js';
import type { ApiReply } from '../../src/api/reply.js';
import { ApiCallError, call, isDesktop } from './api.js';
import { COARSE_ABOVE_POINTS, coarseIndices } from '../chart/coarse.js';
import type { CoarseIndices } from '../chart/pattern-chart.js';
import { decodeFloats } from './floats.js';

export interface SampleCurves {
  x: Float32Array;
  y: Float32Array;
  background: Float32Array | null;
  model: Float32Array | null;
  /** For a long pattern, each curve's coarse copy (chart/coarse.ts); null for a short one. */
  coarse: CoarseIndices | null;
}

/** The detail with its curves as arrays (its base64 fields emptied). */
export type LoadedSample = SampleDetail & { curves: SampleCurves };

/** To the worker: fetch a sample's detail (browser mode), or decode one the desktop bridge gave. */
export type DecodeRequest = { seq: number; fetch: { url: string; body: string } } | { seq: number; detail: SampleDetail };
export type DecodeAnswer = { seq: number; reply: ApiReply } | { seq: number; sample: LoadedSample } | { seq: number; failed: true };

let worker: Worker | null | undefined;
let nextSeq = 1;
const waiting = new Map<number, (answer: DecodeAnswer) => void>();

function decodeWorker(): Worker | null {
  if (worker !== undefined) return worker;
  try {
    worker = new Worker('decode-worker.js');
    worker.onmessage = (event: MessageEvent<DecodeAnswer>) => {
      waiting.get(event.data.seq)?.(event.data);
      waiting.delete(event.data.seq);
    };
    // A worker that cannot load: what it was asked is done here instead, and so is all that follows.
    worker.onerror = () => {
      worker = null;
      for (const [seq, resolve] of waiting) resolve({ seq, failed: true });
      waiting.clear();
    };
  } catch {
    worker = null;
  }
  return worker;
}

/** The curves decoded here, on the page's thread (when no worker can be started). */
export function decodeDetail(detail: SampleDetail): LoadedSample {
  const x = decodeFloats(detail.x);
  const y = decodeFloats(detail.y);
  const background = detail.background ? decodeFloats(detail.background) : null;
  const model = detail.model ? decodeFloats(detail.model) : null;
  const coarse = x.length > COARSE_ABOVE_POINTS ? coarseCopies(x, y, background, model) : null;
  return { ...detail, x: '', y: '', background: null, model: null, curves: { x, y, background, model, coarse } };
}

function coarseCopies(x: Float32Array, y: Float32Array, background: Float32Array | null, model: Float32Array | null): CoarseIndices {
  let difference: Int32Array | null = null;
  if (model) {
    const diff = new Float32Array(y.length);
    for (let i = 0; i < y.length; i++) diff[i] = y[i]! - model[i]!;
    difference = coarseIndices(x, diff);
  }
  return { y: coarseIndices(x, y), background: background ? coarseIndices(x, background) : null, model: model ? coarseIndices(x, model) : null, difference };
}

function ask(request: Omit<DecodeRequest, 'seq'>, w: Worker): Promise<DecodeAnswer> {
  const seq = nextSeq++;
  return new Promise((resolve) => {
    waiting.set(seq, resolve);
    w.postMessage({ ...request, seq });
  });
}

/** A sample's detail, its curves decoded off the page's thread where a worker can be had. */
/** A sample's loaded detail, kept in `details` once loaded (the screens share it while the project stays as it is). */
export async function cachedSample(details: Map<number, LoadedSample>, id: number): Promise<LoadedSample> {
  let detail = details.get(id);
  if (!detail) {
    detail = await loadSample(id);
    details.set(id, detail);
  }
  return detail;
}

export async function loadSample(id: number): Promise<LoadedSample> {
  const w = decodeWorker();
  if (!w) return decodeDetail(await call('sample.get', { id }));
  const answer = isDesktop()
    ? await ask({ detail: await call('sample.get', { id }) }, w)
    : await ask({ fetch: { url: '/api/sample.get', body: JSON.stringify({ id }) } }, w);
  if ('sample' in answer) return answer.sample;
  if ('failed' in answer) return decodeDetail(await call('sample.get', { id }));
  if (!answer.reply.ok) throw new ApiCallError(answer.reply.error.message, answer.reply.error.kind);
  throw new ApiCallError('Crystallog could not read this sample.', 'internal');
}
