import { InputError, isInputError } from '../../core/errors.js';

/**
 * Run one CLI command: print its result as exactly one JSON document on stdout (with --json) or as
 * readable text, map user errors to exit 2 with a one-line reason on stderr, other faults to exit 1.
 */
export async function runCommand<T>(
  json: boolean,
  work: () => Promise<T> | T,
  toText: (result: T) => string,
  /** The one file the command works on: an internal fault names it (a user error names its own place). */
  file?: string,
): Promise<void> {
  try {
    const result = await work();
    // A command that streams its own output (analyze) returns nothing to print.
    if (result !== undefined) process.stdout.write(json ? JSON.stringify(result, null, 2) + '\n' : toText(result));
  } catch (err) {
    reportFailure(err, json, file);
  }
}

/**
 * A failure: a one-line reason on stderr, exit 2 for the user's mistake and 1 for an internal fault;
 * with --json also one JSON document `{ "error": { "message", "file", "line" } }` on stdout.
 */
function reportFailure(err: unknown, json: boolean, file?: string): void {
  const input = isInputError(err);
  const text = oneLine(err instanceof Error ? err.message : String(err));
  const message = !input && file !== undefined && !text.includes(file) ? `${file}: ${text}` : text;
  process.stderr.write(input ? `crystallog: ${message}\n` : `crystallog: internal fault: ${message}\n`);
  if (!input && process.env.CRYSTALLOG_DEBUG && err instanceof Error) process.stderr.write(`${err.stack}\n`);
  process.exitCode = input ? 2 : 1;
  if (json) {
    const error = { message: input ? message : `internal fault: ${message}`, file: input ? (err.file ?? null) : (file ?? null), line: input ? (err.line ?? null) : null };
    process.stdout.write(JSON.stringify({ error }, null, 2) + '\n');
  }
}

function oneLine(text: string): string {
  return text.replace(/\s*\n\s*/g, ' ');
}

/** Parse a number option, or fail as the user's error naming the option. */
export function numberOption(name: string, text: string | undefined, check: (v: number) => boolean, hint: string): number | undefined {
  if (text === undefined) return undefined;
  const value = Number(String(text).replace(',', '.'));
  if (!Number.isFinite(value) || !check(value)) {
    throw new InputError(`option ${name} ${text}: ${hint}`);
  }
  return value;
}

/** The shared --background option: the SNIP clipping half-width in degrees 2θ, or undefined for automatic. */
export const BACKGROUND_OPTION_HELP = 'background clipping half-width, degrees 2θ (default: automatic, 1.0 widened to broad peaks)';
