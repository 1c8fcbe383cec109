/**
 * The app's engine in a process of its own, for the desktop shell. The shell's runtime embeds a Node.js
 * of another ABI than the system's, so native modules built at install time (better-sqlite3) cannot load
 * in it; they load here, in a child started with the system's Node.js (see engine-client.ts).
 * Messages in: { id, method, params }; out: { ready: true } once, then { id, reply } per call.
 */
import { createAppApi } from './api.js';
import type { EngineMessage, EngineRequest } from './engine-client.js';

const send = process.send?.bind(process);
if (!send) throw new Error('engine-process.js runs only as a child process with an IPC channel');

const api = createAppApi({ mode: 'electron' });
process.on('message', (request: EngineRequest) => {
  void api.call(request.method, request.params).then((reply) => {
    if (process.connected) send({ id: request.id, reply } satisfies EngineMessage);
  });
});
// The shell went away: close the project store cleanly and end.
process.on('disconnect', () => {
  api.close();
  process.exit(0);
});
send({ ready: true } satisfies EngineMessage);
