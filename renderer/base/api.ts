import type { ApiInput, ApiMethod, ApiResults } from '../../src/api/contract.js';
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
    let response: Response;
    try {
      response = await fetch(`/api/${method}`, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(params) });
    } catch {
      throw new ApiCallError('Crystallog is not answering; it may have been closed. Start it again.', 'internal');
    }
    const type = response.headers.get('content-type') ?? '';
    reply = type.startsWith('application/json') ? ((await response.json()) as ApiReply) : { ok: false, error: { kind: 'internal', message: await response.text() } };
  }
  if (!reply.ok) throw new ApiCallError(reply.error.message, reply.error.kind);
  return reply.result as ApiResults[M];
}

/** Bytes of a file as base64, in chunks (no giant argument lists). */
export function toBase64(bytes: Uint8Array): string {
  let binary = '';
  const chunk = 0x8000;
  for (let i = 0; i < bytes.length; i += chunk) binary += String.fromCharCode(...bytes.subarray(i, i + chunk));
  return btoa(binary);
}

/** Float32 little-endian arrays sent by the app as base64. */
export function decodeFloats(base64: string): Float32Array {
  const binary = atob(base64);
  const bytes = new Uint8Array(binary.length);
  for (let i = 0; i < binary.length; i++) bytes[i] = binary.charCodeAt(i);
  return new Float32Array(bytes.buffer);
}

/** Let the user pick files: the native dialog on the desktop, the browser's picker otherwise. */
export async function pickFiles(kind: 'patterns' | 'references'): Promise<PickedFile[]> {
  const desktop = bridge();
  if (desktop) return desktop.openFiles(kind);
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
  return Promise.all(files.map(async (f) => ({ name: f.name, bytesBase64: toBase64(new Uint8Array(await f.arrayBuffer())) })));
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
