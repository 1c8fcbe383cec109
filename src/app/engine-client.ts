/**
 * The desktop shell's side of the engine process (engine-process.ts): starts it with the system's
 * Node.js and forwards API calls to it, answering each call with its reply, in any order.
 */
import { fork, type ChildProcess } from 'node:child_process';
import type { ApiDispatcher, ApiReply } from '../api/reply.js';

export interface EngineRequest {
  id: number;
  method: string;
  params: unknown;
}

export type EngineMessage = { ready: true } | { id: number; reply: ApiReply };

export interface EngineOptions {
  /** The Node.js executable to run the engine with (the system's, which built the native modules). */
  nodePath: string;
  /** The compiled engine-process.js. */
  script: string;
  /** Extra environment for the engine (e.g. CRYSTALLOG_DATA_DIR). */
  env?: NodeJS.ProcessEnv;
}

export interface EngineConnection extends ApiDispatcher {
  /** Settles when the engine has opened its app data and answers calls; rejects if it could not start. */
  ready: Promise<void>;
}

export function startEngine(options: EngineOptions): EngineConnection {
  const child: ChildProcess = fork(options.script, [], {
    execPath: options.nodePath,
    // Electron sets this for its own children; the system's Node.js must not see it.
    env: { ...process.env, ELECTRON_RUN_AS_NODE: undefined, ...options.env },
    stdio: ['ignore', 'inherit', 'inherit', 'ipc'],
    // Structured clone, not JSON: a dropped file's bytes cross as a Uint8Array (sample.stage), not a list of numbers.
    serialization: 'advanced',
  });
  const pending = new Map<number, (reply: ApiReply) => void>();
  let nextId = 1;
  let stopped: string | null = null;
  let markReady: () => void = () => {};
  let failStart: (err: Error) => void = () => {};
  const ready = new Promise<void>((resolve, reject) => {
    markReady = resolve;
    failStart = reject;
  });

  child.on('message', (message: EngineMessage) => {
    if ('ready' in message) return markReady();
    pending.get(message.id)?.(message.reply);
    pending.delete(message.id);
  });
  const stop = (why: string): void => {
    if (stopped !== null) return;
    stopped = why;
    failStart(new Error(why));
    for (const answer of pending.values()) answer({ ok: false, error: { kind: 'internal', message: `Crystallog's engine stopped (${why}); restart the app.` } });
    pending.clear();
  };
  child.on('error', (err) => stop(`could not run ${options.nodePath}: ${err.message}`));
  child.on('exit', (code, signal) => stop(signal ? `signal ${signal}` : `exit code ${code}`));

  return {
    ready,
    call(method, params) {
      if (stopped !== null) return Promise.resolve({ ok: false, error: { kind: 'internal', message: `Crystallog's engine stopped (${stopped}); restart the app.` } });
      const id = nextId++;
      return new Promise<ApiReply>((resolve) => {
        pending.set(id, resolve);
        child.send({ id, method, params } satisfies EngineRequest);
      });
    },
    close() {
      if (child.connected) child.disconnect();
    },
  };
}
