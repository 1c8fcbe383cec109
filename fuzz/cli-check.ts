/**
 * The command-line contract on one fuzz input: run `crystallog <command> --json FILE` and check that it
 * never ends in an internal fault (exit 1), never hangs, leaves the file's bytes as they were, prints
 * exactly one JSON document on stdout, and on exit 2 names the file on stderr (and in the JSON error).
 */
import { spawn } from 'node:child_process';
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

export type CliCommand = 'peaks' | 'match' | 'size' | 'analyze';
export const CLI_COMMANDS: readonly CliCommand[] = ['peaks', 'match', 'size', 'analyze'];

export interface CliCheck {
  command: CliCommand;
  file: string;
  exitCode: number | null;
  hung: boolean;
  changed: boolean;
  /** Every broken rule, in words (empty when the run kept the contract). */
  violations: string[];
  stderr: string;
  ms: number;
}

/** bin/crystallog.js of this checkout (the fuzz modules run from fuzz/ or dist/fuzz/). */
export function crystallogBin(): string {
  const here = fileURLToPath(import.meta.url);
  return here.replace(/([\\/])(dist[\\/])?fuzz[\\/][^\\/]+$/, '$1bin$1crystallog.js');
}

const sha256 = (path: string): string => createHash('sha256').update(readFileSync(path)).digest('hex');

export async function checkCli(command: CliCommand, file: string, library: string, timeoutMs: number): Promise<CliCheck> {
  const args = [crystallogBin(), command, '--json', file];
  if (command !== 'peaks') args.push('--library', library);
  if (command === 'analyze') args.push('--workers', '1');
  const before = sha256(file);
  const started = Date.now();
  const run = await new Promise<{ code: number | null; stdout: string; stderr: string; hung: boolean }>((resolve) => {
    const child = spawn(process.execPath, args, { stdio: ['ignore', 'pipe', 'pipe'] });
    const out: Buffer[] = [];
    const err: Buffer[] = [];
    let hung = false;
    const timer = setTimeout(() => {
      hung = true;
      child.kill('SIGKILL');
    }, timeoutMs);
    child.stdout.on('data', (chunk: Buffer) => out.push(chunk));
    child.stderr.on('data', (chunk: Buffer) => err.push(chunk));
    child.on('close', (code) => {
      clearTimeout(timer);
      resolve({ code, stdout: Buffer.concat(out).toString('utf8'), stderr: Buffer.concat(err).toString('utf8'), hung });
    });
  });
  const ms = Date.now() - started;
  const changed = sha256(file) !== before;
  const violations: string[] = [];
  if (run.hung) violations.push(`no answer within ${timeoutMs / 1000} s`);
  if (changed) violations.push('the input file changed');
  if (!run.hung) {
    if (run.code === 1) violations.push('exit 1 (internal fault)');
    else if (run.code !== 0 && run.code !== 2) violations.push(`exit code ${run.code}`);
    let document: unknown = undefined;
    try {
      document = JSON.parse(run.stdout);
    } catch {
      violations.push(`stdout is not exactly one JSON document (${run.stdout.length} characters)`);
    }
    if (run.code === 2) {
      const failureLines = run.stderr.split('\n').filter((l) => l.startsWith('crystallog:') && !l.startsWith('crystallog: warning:'));
      if (failureLines.length === 0) violations.push('exit 2 without a reason on stderr');
      for (const line of failureLines) if (!line.includes(file)) violations.push(`exit 2 reason does not name the file: ${line.slice(0, 200)}`);
      if (command !== 'analyze' && document !== undefined) {
        const error = (document as { error?: { file?: unknown } }).error;
        if (!error || error.file !== file) violations.push('exit 2 JSON error does not name the file');
      }
    }
  }
  return { command, file, exitCode: run.code, hung: run.hung, changed, violations, stderr: run.stderr.slice(0, 2000), ms };
}
