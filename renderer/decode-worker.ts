/**
 * The page's worker for long patterns (see base/sample-data.ts): fetches a sample's detail and
 * decodes its curves, or decodes a detail the desktop bridge gave, and hands the arrays back.
 */
import type { SampleDetail } from '../src/api/contract.js';
import type { ApiReply } from '../src/api/reply.js';
import { decodeDetail, type DecodeAnswer, type DecodeRequest } from './base/sample-data.js';

const scope = self as unknown as { onmessage: ((event: MessageEvent<DecodeRequest>) => void) | null; postMessage(message: DecodeAnswer, transfer: Transferable[]): void };

async function answer(request: DecodeRequest): Promise<DecodeAnswer> {
  let detail: SampleDetail;
  if ('fetch' in request) {
    let reply: ApiReply;
    try {
      const response = await fetch(request.fetch.url, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: request.fetch.body });
      const type = response.headers.get('content-type') ?? '';
      reply = type.startsWith('application/json') ? ((await response.json()) as ApiReply) : { ok: false, error: { kind: 'internal', message: await response.text() } };
    } catch {
      reply = { ok: false, error: { kind: 'internal', message: 'Crystallog is not answering; it may have been closed. Start it again.' } };
    }
    if (!reply.ok) return { seq: request.seq, reply };
    detail = reply.result as SampleDetail;
  } else {
    detail = request.detail;
  }
  return { seq: request.seq, sample: decodeDetail(detail) };
}

scope.onmessage = (event) => {
  void answer(event.data).then((message) => {
    const curves = 'sample' in message ? message.sample.curves : null;
    const arrays = curves ? [curves.x, curves.y, curves.background, curves.model, curves.coarse?.y, curves.coarse?.background, curves.coarse?.model, curves.coarse?.difference] : [];
    const transfer = arrays.filter((a): a is Float32Array | Int32Array => a != null).map((a) => a.buffer as ArrayBuffer);
    scope.postMessage(message, transfer);
  });
};
