/**
 * Hand-written decimal number scanner over a string, for the column reader's hot loop:
 * no slicing, no regular expressions, no allocation. Up to 15 digits and a power of ten
 * up to 10^22 give the correctly rounded double by one multiplication or division
 * (Clinger, "How to read floating point numbers accurately", PLDI 1990); anything longer falls back
 * to Number().
 */

const POW10 = new Float64Array(23);
for (let i = 0; i < POW10.length; i++) POW10[i] = Number(`1e${i}`);

const MAX_EXACT_DIGITS = 15;

/** End index of the last number scanned (valid after a non-NaN result). */
export const scanState = { end: 0 };

/** False for NaN (past the end of the text). */
const isDigit = (c: number): boolean => c >= 48 && c <= 57;

/**
 * Read a number starting at text[i]: optional sign, digits, decimal mark ('.' or, when allowed, ','),
 * optional exponent. It stops at the first character that cannot continue the number (a line end,
 * a blank, a separator, the end of the text: charCodeAt gives NaN there). Returns NaN when no number
 * starts at i; the caller checks what follows scanState.end. "nan", "inf" and the like are not numbers.
 */
export function scanNumber(text: string, i: number, decimalComma: boolean): number {
  const start = i;
  let c = text.charCodeAt(i);
  let negative = false;
  if (c === 45 || c === 43) {
    negative = c === 45;
    c = text.charCodeAt(++i);
  }
  let mantissa = 0;
  const wholeStart = i;
  while (isDigit(c)) {
    mantissa = mantissa * 10 + (c - 48);
    c = text.charCodeAt(++i);
  }
  let digits = i - wholeStart;
  let exponent = 0;
  if (c === 46 || (decimalComma && c === 44)) {
    const fractionStart = ++i;
    c = text.charCodeAt(i);
    while (isDigit(c)) {
      mantissa = mantissa * 10 + (c - 48);
      c = text.charCodeAt(++i);
    }
    exponent = fractionStart - i;
    digits -= exponent;
  }
  if (digits === 0) return Number.NaN;
  if (c === 101 || c === 69) {
    const written = scanExponent(text, i + 1);
    if (written !== written) return Number.NaN;
    exponent += written;
    i = scanState.end;
  }
  scanState.end = i;
  if (digits <= MAX_EXACT_DIGITS && exponent >= -22 && exponent <= 22) {
    const value = exponent < 0 ? mantissa / POW10[-exponent] : mantissa * POW10[exponent];
    return negative ? -value : value;
  }
  return Number(text.slice(start, i).replace(',', '.'));
}

/** integer × 10^power, correctly rounded for integers below 2^53 and |power| ≤ 22 (same fast path). */
export function scaleByPowerOfTen(integer: number, power: number): number {
  if (power >= 0 && power <= 22) return integer * POW10[power];
  if (power < 0 && power >= -22) return integer / POW10[-power];
  return Number(`${integer}e${power}`);
}

/** The exponent digits after "e" (sign allowed), ending at scanState.end; NaN when there are none. Kept apart so scanNumber stays small enough to inline. */
function scanExponent(text: string, j: number): number {
  let e = text.charCodeAt(j);
  let negative = false;
  if (e === 45 || e === 43) {
    negative = e === 45;
    e = text.charCodeAt(++j);
  }
  if (!isDigit(e)) return Number.NaN;
  let written = 0;
  while (isDigit(e)) {
    if (written < 100000) written = written * 10 + (e - 48);
    e = text.charCodeAt(++j);
  }
  scanState.end = j;
  return negative ? -written : written;
}
