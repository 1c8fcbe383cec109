import { InputError, isInputError } from '../../core/errors.js';

/**
 * Run one CLI command: print its result as exactly one JSON document on stdout (with --json) or as
 * readable text, map user errors to exit 2 with a one-line reason on stderr, other faults to exit 1.
 */
export async function runCommand<T>(
  json: boolean,
  work: () => Promise<T> | T,
  toText: (result: T) => string,
): Promise<void> {
  try {
    const result = await work();
    process.stdout.write(json ? JSON.stringify(result, null, 2) + '\n' : toText(result));
  } catch (err) {
    if (isInputError(err)) {
      process.stderr.write(`crystallog: ${oneLine(err.message)}\n`);
      process.exitCode = 2;
    } else {
      const message = err instanceof Error ? err.message : String(err);
      process.stderr.write(`crystallog: internal fault: ${oneLine(message)}\n`);
      if (process.env.CRYSTALLOG_DEBUG && err instanceof Error) process.stderr.write(`${err.stack}\n`);
      process.exitCode = 1;
    }
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
export function backgroundOption(text: string | undefined): number | undefined {
  return numberOption('--background', text, (v) => v > 0 && v <= 20, 'give a half-width in degrees 2θ between 0 and 20, such as 1');
}
