/**
 * What every call across a process boundary (IPC, HTTP) returns: a result, or an error as a sentence.
 * Pure types, shared by the app, the shell, the host and the screens.
 */
export type ApiErrorKind = 'input' | 'internal';

export interface ApiFailure {
  ok: false;
  error: { kind: ApiErrorKind; message: string };
}

export type ApiReply<T = unknown> = { ok: true; result: T } | ApiFailure;

/** The one door into the app: a method name and its parameters, both checked at runtime. */
export interface ApiDispatcher {
  call(method: string, params: unknown): Promise<ApiReply>;
  close(): void;
}
