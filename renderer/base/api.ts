import type { ApiInput, ApiMethod, ApiResults, PatternPreview } from '../../src/api/contract.js';
import type { CrystallogBridge, PickedFile, SaveRequest } from '../../src/api/bridge.js';
import type { ApiReply } from '../../src/api/reply.js';

declare global {
  interface Window {
    crystallog?: CrystallogBridge;
  }
}

/** A failed call, carrying the app's sentence for the user. */
export class ApiCallError extends Error {
  constructor(
    message: string,
    readonly kind: 'input' | 'internal',
  ) {
    super(message);
  }
}

const bridge = (): CrystallogBridge | undefined => window.crystallog;

export const isDesktop = (): boolean => bridge() !== undefined;

/** Call the app: through the desktop bridge, or the local host in browser mode. */
export async function call<M extends ApiMethod>(method: M, params: ApiInput<M>): Promise<ApiResults[M]> {
  let reply: ApiReply;
  const desktop = bridge();
  if (desktop) {
    reply = await desktop.call(method, params);
  } else {
    reply = await post(`/api/${method}`, 'application/json', JSON.stringify(params));
  }
  return resultOf<M>(reply);
}

function resultOf<M extends ApiMethod>(reply: ApiReply): ApiResults[M] {
  if (!reply.ok) throw new ApiCallError(reply.error.message, reply.error.kind);
  return reply.result as ApiResults[M];
}

/** One request to the local host (browser mode). */
async function post(url: string, contentType: string, body: BodyInit): Promise<ApiReply> {
  let response: Response;
  try {
    response = await fetch(url, { method: 'POST', headers: { 'Content-Type': contentType }, body });
  } catch {
    throw new ApiCallError('Crystallog is not answering; it may have been closed. Start it again.', 'internal');
  }
  const type = response.headers.get('content-type') ?? '';
  return type.startsWith('application/json') ? ((await response.json()) as ApiReply) : { ok: false, error: { kind: 'internal', message: await response.text() } };
}

/**
 * A pattern file the user gave: in the page, the File itself (sent as it is, never turned into a
 * string here); from the desktop's own dialog, its bytes as base64.
 */
export interface PatternFile {
  name: string;
  blob?: Blob;
  bytesBase64?: string;
  /** Why it was not read (see PickedFile). */
  refused?: string;
}

/**
 * Start a file in progress; answers with its reduced pattern once the engine has read it. In browser
 * mode the File is the request body (the browser streams it; the page never holds it as a string).
 */
export async function stagePattern(jobId: string, file: PatternFile): Promise<PatternPreview> {
  const desktop = bridge();
  if (file.blob && !desktop) return resultOf<'sample.stage'>(await post(`/api/sample.stage?${new URLSearchParams({ jobId, fileName: file.name })}`, 'application/octet-stream', file.blob));
  if (file.blob) return call('sample.stage', { jobId, fileName: file.name, bytes: new Uint8Array(await file.blob.arrayBuffer()) });
  return call('sample.stage', { jobId, fileName: file.name, bytesBase64: file.bytesBase64 ?? '' });
}

/** Bytes of a file as base64, in chunks (no giant argument lists). */
export function toBase64(bytes: Uint8Array): string {
  let binary = '';
  const chunk = 0x8000;
  for (let i = 0; i < bytes.length; i += chunk) binary += String.fromCharCode(...bytes.subarray(i, i + chunk));
  return btoa(binary);
}

export { decodeFloats } from './floats.js';

/** Let the user pick files: the native dialog on the desktop, the browser's picker otherwise. */
export async function pickFiles(kind: 'patterns' | 'references'): Promise<PickedFile[]> {
  const desktop = bridge();
  if (desktop) return desktop.openFiles(kind);
  const files = await browserPick(kind);
  return Promise.all(files.map(async (f) => ({ name: f.name, bytesBase64: toBase64(new Uint8Array(await f.arrayBuffer())) })));
}

/** Pattern files to add: the desktop dialog's, or the browser picker's Files as they are. */
export async function pickPatternFiles(): Promise<PatternFile[]> {
  const desktop = bridge();
  if (desktop) return desktop.openFiles('patterns');
  return (await browserPick('patterns')).map((f) => ({ name: f.name, blob: f }));
}

async function browserPick(kind: 'patterns' | 'references'): Promise<File[]> {
  const input = document.createElement('input');
  input.type = 'file';
  input.multiple = true;
  input.accept = kind === 'patterns' ? '.xy,.xye,.txt,.dat,.csv,.cif,.asc' : '.json,.csv,.cif';
  input.dataset.picker = kind;
  input.hidden = true;
  document.body.append(input);
  const files = await new Promise<File[]>((resolve) => {
    input.addEventListener('change', () => resolve(Array.from(input.files ?? [])), { once: true });
    input.addEventListener('cancel', () => resolve([]), { once: true });
    input.click();
  });
  input.remove();
  return files;
}

/** Save a file: the native dialog on the desktop, a download otherwise. */
export async function saveFile(request: SaveRequest, mime: string): Promise<string | null> {
  const desktop = bridge();
  if (desktop) return desktop.saveFile(request);
  const blob =
    request.text !== undefined
      ? new Blob([request.text], { type: mime })
      : new Blob([Uint8Array.from(atob(request.bytesBase64 ?? ''), (c) => c.charCodeAt(0))], { type: mime });
  const url = URL.createObjectURL(blob);
  const link = document.createElement('a');
  link.href = url;
  link.download = request.suggestedName;
  document.body.append(link);
  link.click();
  link.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
  return request.suggestedName;
}
