/**
 * Errors the user can cause (a bad file, a broken reference, an impossible parameter).
 * The message is a sentence a chemist understands: what is wrong, where (file and line), what to do.
 * The CLI maps InputError to exit code 2; anything else is an internal fault (exit 1).
 */
export interface InputErrorPlace {
  file?: string;
  line?: number;
}

export class InputError extends Error {
  readonly file: string | undefined;
  readonly line: number | undefined;

  constructor(message: string, place: InputErrorPlace = {}) {
    super(escapeControls(InputError.compose(message, place)));
    this.name = 'InputError';
    this.file = place.file;
    this.line = place.line;
  }

  private static compose(message: string, place: InputErrorPlace): string {
    if (place.file && place.line !== undefined) return `${place.file}, line ${place.line}: ${message}`;
    if (place.file) return `${place.file}: ${message}`;
    if (place.line !== undefined) return `line ${place.line}: ${message}`;
    return message;
  }
}

export function isInputError(err: unknown): err is InputError {
  return err instanceof InputError;
}

/**
 * Control characters quoted from a file (a bell, an escape sequence) are shown as \xNN, so a message
 * can never drive the user's terminal; tabs and line breaks stay as they are.
 */
export function escapeControls(text: string): string {
  return text.replace(/[\u0000-\u0008\u000b-\u001f\u007f-\u009f]/g, (c) => `\\x${c.charCodeAt(0).toString(16).padStart(2, '0')}`);
}
