/**
 * The first row of CSV text, split into fields, as the CSV package (papaparse 5, `Papa.parse(text,
 * { delimiter, quoteChar: '"' }).data[0]`) splits it: RFC 4180 quoting ("" inside a quoted field is
 * one quote; spaces may stand between a closing quote and the delimiter), its line-ending guess, and
 * its reading of malformed quotes. The pattern reader needs only a header line, and loading the whole
 * package costs a one-file command more than reading its data (issue 15: start-up); the test compares
 * the two on random text.
 */
const QUOTE = '"';
const BYTE_ORDER_MARK = '\uFEFF';

/** The line ending the package would take: \n unless the text (outside quotes) breaks lines with \r. */
function guessLineEnding(text: string): '\n' | '\r' | '\r\n' {
  const unquoted = text.slice(0, 1024 * 1024).replace(/"([^]*?)"/gm, '');
  const r = unquoted.split('\r');
  const n = unquoted.split('\n');
  if (r.length === 1 || (n.length > 1 && n[0]!.length < r[0]!.length)) return '\n';
  const withN = r.filter((part) => part[0] === '\n').length;
  return withN >= r.length / 2 ? '\r\n' : '\r';
}

/** The fields of the first row of `text` with one-character `delimiter` (none for empty text). */
export function firstCsvRow(text: string, delimiter: ',' | ';'): string[] {
  const input = text.charCodeAt(0) === 0xfeff ? text.slice(BYTE_ORDER_MARK.length) : text;
  if (input === '') return [];
  const newline = guessLineEnding(input);
  if (!input.includes(QUOTE)) return input.split(newline)[0]!.split(delimiter);

  const unescape = (field: string) => field.replace(/""/g, QUOTE);
  const row: string[] = [];
  let cursor = 0;
  let nextDelimiter = input.indexOf(delimiter, cursor);
  let nextNewline = input.indexOf(newline, cursor);
  let quoteAt = input.indexOf(QUOTE, cursor);
  // Blanks only between the closing quote and `index` (not the end) count as allowed spaces.
  const spacesBefore = (index: number): number => {
    if (index === -1) return 0;
    const between = input.substring(quoteAt + 1, index);
    return between !== '' && between.trim() === '' ? between.length : 0;
  };
  for (;;) {
    if (input[cursor] === QUOTE) {
      quoteAt = cursor;
      cursor++;
      for (;;) {
        quoteAt = input.indexOf(QUOTE, quoteAt + 1);
        // No closing quote: the rest of the text, as it stands, is the last field.
        if (quoteAt === -1) return [...row, input.substring(cursor)];
        if (quoteAt === input.length - 1) return [...row, unescape(input.substring(cursor, quoteAt))];
        if (input[quoteAt + 1] === QUOTE) {
          quoteAt++;
          continue;
        }
        if (nextDelimiter !== -1 && nextDelimiter < quoteAt + 1) nextDelimiter = input.indexOf(delimiter, quoteAt + 1);
        if (nextNewline !== -1 && nextNewline < quoteAt + 1) nextNewline = input.indexOf(newline, quoteAt + 1);
        const toDelimiter = spacesBefore(nextNewline === -1 ? nextDelimiter : Math.min(nextDelimiter, nextNewline));
        if (input.substr(quoteAt + 1 + toDelimiter, 1) === delimiter) {
          row.push(unescape(input.substring(cursor, quoteAt)));
          cursor = quoteAt + 1 + toDelimiter + 1;
          if (input[cursor] !== QUOTE) quoteAt = input.indexOf(QUOTE, cursor);
          if (nextDelimiter !== -1 && nextDelimiter < cursor) nextDelimiter = input.indexOf(delimiter, cursor);
          if (nextNewline !== -1 && nextNewline < cursor) nextNewline = input.indexOf(newline, cursor);
          break;
        }
        const toNewline = spacesBefore(nextNewline);
        const after = quoteAt + 1 + toNewline;
        if (input.substring(after, after + newline.length) === newline) return [...row, unescape(input.substring(cursor, quoteAt))];
        // A quote inside a quoted field followed by neither delimiter nor line end: malformed, read on.
        quoteAt++;
      }
      continue;
    }
    if (nextDelimiter !== -1 && (nextDelimiter < nextNewline || nextNewline === -1)) {
      row.push(input.substring(cursor, nextDelimiter));
      cursor = nextDelimiter + 1;
      nextDelimiter = input.indexOf(delimiter, cursor);
      continue;
    }
    if (nextNewline !== -1) return [...row, input.substring(cursor, nextNewline)];
    return [...row, input.substring(cursor)];
  }
}
