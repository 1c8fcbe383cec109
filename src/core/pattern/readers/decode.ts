import { InputError } from '../../errors.js';

/** How much of the file start is inspected to tell text from binary. */
const SNIFF_BYTES = 65536;
/** Share of control bytes above which a file counts as binary (common practice for text sniffing). */
const MAX_CONTROL_SHARE = 0.05;
/** UTF-8 that refuses invalid bytes, so that Latin-1 files are read as Latin-1. */
const STRICT_UTF8 = new TextDecoder('utf-8', { fatal: true });

/**
 * Turn file bytes into text: UTF-8 (with or without BOM), UTF-16 LE/BE with BOM, and Latin-1 as the
 * fallback for bytes that are not valid UTF-8. Empty and binary files are the user's error.
 */
export function decodeText(bytes: Uint8Array, fileName: string): string {
  if (bytes.length === 0) throw new InputError('the file is empty; choose the exported pattern file', { file: fileName, line: 1 });
  if (bytes.length >= 2 && bytes[0] === 0xff && bytes[1] === 0xfe) return checkText(new TextDecoder('utf-16le').decode(bytes.subarray(2)), fileName);
  if (bytes.length >= 2 && bytes[0] === 0xfe && bytes[1] === 0xff) return checkText(new TextDecoder('utf-16be').decode(bytes.subarray(2)), fileName);
  const hasBom = bytes.length >= 3 && bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf;
  const body = hasBom ? bytes.subarray(3) : bytes;
  rejectBinary(body, fileName);
  return checkText(decodeUtf8OrLatin1(body), fileName);
}

function decodeUtf8OrLatin1(body: Uint8Array): string {
  try {
    return STRICT_UTF8.decode(body);
  } catch {
    return new TextDecoder('latin1').decode(body);
  }
}

function isControlByte(b: number): boolean {
  return (b < 32 && b !== 9 && b !== 10 && b !== 13 && b !== 12 && b !== 11 && b !== 26) || b === 127;
}

function rejectBinary(bytes: Uint8Array, fileName: string): void {
  const n = Math.min(bytes.length, SNIFF_BYTES);
  let controls = 0;
  let firstBad = -1;
  for (let i = 0; i < n; i++) {
    const b = bytes[i];
    if (b === 0 || isControlByte(b)) {
      if (firstBad < 0) firstBad = i;
      if (b === 0) return binaryError(bytes, i, fileName);
      controls++;
    }
  }
  if (controls > MAX_CONTROL_SHARE * n) binaryError(bytes, firstBad, fileName);
}

function binaryError(bytes: Uint8Array, at: number, fileName: string): never {
  let line = 1;
  for (let i = 0; i < at; i++) if (bytes[i] === 10) line++;
  throw new InputError(
    'this is a binary file, not text; export the pattern from the instrument software as text (XY, CSV) or powder CIF',
    { file: fileName, line },
  );
}

function checkText(decoded: string, fileName: string): string {
  // Old Mac exports end their lines with CR alone: read each CR as a line end (line numbers stay right).
  const text = decoded.includes('\r') && !decoded.includes('\n') ? decoded.replace(/\r/g, '\n') : decoded;
  if (text.trim() === '') throw new InputError('the file holds no data, only blank space', { file: fileName, line: 1 });
  const nul = text.indexOf('\u0000');
  if (nul >= 0) {
    let line = 1;
    for (let i = 0; i < nul; i++) if (text.charCodeAt(i) === 10) line++;
    throw new InputError('the text holds NUL characters, so it is probably a binary file; export the pattern as text', { file: fileName, line });
  }
  return text;
}
