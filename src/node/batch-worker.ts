/**
 * One worker thread of the batch pool (see batch.ts): builds the analysis context once from the
 * shared setup, then reads and analyses each file it is sent, answering with JSON text or the error.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { isInputError } from '../core/errors.js';
import { readPatternFile } from './files.js';
import { contextFromShared, fileFailure, type BatchFileOutcome, type SharedSetup, type WorkerMessage, type WorkerTask } from './batch.js';
import { analyzePattern } from '../core/analysis/analyse.js';

const port = parentPort;
if (!port) throw new Error('batch-worker.js runs only as a worker thread');
const context = contextFromShared(workerData as SharedSetup);

port.on('message', (task: WorkerTask) => {
  let outcome: BatchFileOutcome;
  try {
    const result = analyzePattern(readPatternFile(task.file), context);
    outcome = { index: task.index, file: task.file, json: JSON.stringify(result), error: null, errorKind: null };
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    outcome = isInputError(err)
      ? { index: task.index, file: task.file, json: null, error: fileFailure(task.file, message, 'input'), errorKind: 'input' }
      : { index: task.index, file: task.file, json: null, error: fileFailure(task.file, message, 'internal'), errorKind: 'internal' };
  }
  port.postMessage(outcome satisfies WorkerMessage);
});
port.postMessage({ ready: true } satisfies WorkerMessage);
