import { isInputError } from '../../errors.js';
import { parseWavelength, singleWavelength, DEFAULT_KALPHA2_RATIO, type Wavelength } from '../../model/wavelengths.js';

/**
 * Metadata from the lines before the data of a text pattern ("# Wavelength: 1.5406", "Anode: Cu",
 * "# lambda=1.54056 A", "Kalpha1 1.5406"): key/value pairs into meta, the X-ray source into a Wavelength.
 */
export interface TextMetadata {
  meta: Record<string, string>;
  wavelength: Wavelength | null;
  notes: string[];
}

const COMMENT_MARK = /^[#!;]+\s*/;
const KEY_VALUE = /^([^:=]{1,40}?)\s*[:=]\s*(.*)$/;
const MAX_KEY_WORDS = 5;
const WORD_THEN_NUMBER = /^([A-Za-zα\u00c0-\u024f][\w\u00c0-\u024f().\-/ α]{0,40}?)\s+([-+]?\d[\d.,]*(?:[eE][-+]?\d+)?(?:\s*\S+)?)$/;
const FIRST_NUMBER = /[-+]?(?:\d+[.,]?\d*|[.,]\d+)(?:[eE][-+]?\d+)?/;
const ANODE_TOKEN = /^(cr|fe|co|cu|mo|ag)(k.*)?$/i;

/** The anode symbol in text like "Cu", "CuKa", "Cu K-alpha", "copper tube (Cu)". */
export function anodeSymbol(text: string): string | undefined {
  for (const token of text.split(/[^A-Za-zα]+/)) {
    const m = ANODE_TOKEN.exec(token);
    if (m) return m[1];
  }
  return undefined;
}

type WavelengthRole = 'alpha1' | 'alpha2' | 'ratio' | 'lambda' | 'anode';

/** Which part of the source a metadata key describes, if any. */
function wavelengthRole(key: string): WavelengthRole | null {
  const k = key.toLowerCase().replace(/[\s_\-]/g, '');
  if (k.includes('ratio')) return 'ratio';
  if (/^(k?alpha1|kα1|ka1|lambda1|λ1|wavelength1)/.test(k)) return 'alpha1';
  if (/^(k?alpha2|kα2|ka2|lambda2|λ2|wavelength2)/.test(k)) return 'alpha2';
  if (/^(wavelength|wavelen|lambda|λ|wl)/.test(k)) return 'lambda';
  if (/^(anode|tube|target|radiation|anodematerial|tubeanode)/.test(k)) return 'anode';
  return null;
}

/** A length in Å from text like "1.5406", "1,5406 Å", "0.15406 nm". Null when there is no number. */
function lengthInAngstrom(text: string): number | null {
  const m = FIRST_NUMBER.exec(text);
  if (!m) return null;
  const value = Number(m[0].replace(',', '.'));
  if (!Number.isFinite(value)) return null;
  const unit = text.slice(m.index + m[0].length).trim().toLowerCase();
  if (unit.startsWith('nm')) return value * 10;
  if (unit.startsWith('pm')) return value / 100;
  return value;
}

/** Key/value pair of a metadata line, or null for free text. */
function splitKeyValue(line: string): { key: string; value: string } | null {
  const kv = KEY_VALUE.exec(line);
  if (kv && kv[1].trim() !== '' && kv[1].trim().split(/\s+/).length <= MAX_KEY_WORDS) return { key: kv[1].trim(), value: kv[2].trim() };
  const wn = WORD_THEN_NUMBER.exec(line);
  if (wn) return { key: wn[1].trim(), value: wn[2].trim() };
  return null;
}

export function readTextMetadata(lines: readonly string[]): TextMetadata {
  const meta: Record<string, string> = {};
  const comments: string[] = [];
  const found: Partial<Record<WavelengthRole, string>> = {};
  for (const raw of lines) {
    const line = raw.replace(COMMENT_MARK, '').trim();
    if (line === '') continue;
    const pair = splitKeyValue(line);
    if (!pair) {
      comments.push(line);
      continue;
    }
    if (!(pair.key in meta)) meta[pair.key] = pair.value;
    const role = wavelengthRole(pair.key);
    if (role && found[role] === undefined && pair.value !== '') found[role] = pair.value;
  }
  if (comments.length > 0) meta.comment = comments.join('\n');
  const notes: string[] = [];
  const wavelength = wavelengthFrom(found, notes);
  return { meta, wavelength, notes };
}

/** Doublet from Kα1 + Kα2 numbers, else the anode's doublet, else a single line; unusable values are noted. */
function wavelengthFrom(found: Partial<Record<WavelengthRole, string>>, notes: string[]): Wavelength | null {
  const attempt = (what: string, text: string, make: () => Wavelength | null): Wavelength | null => {
    try {
      return make();
    } catch (err) {
      if (!isInputError(err)) throw err;
      notes.push(`the ${what} "${text}" in the file was not understood and is ignored`);
      return null;
    }
  };
  const alpha1 = found.alpha1 ?? found.lambda;
  const lambda1 = alpha1 === undefined ? null : lengthInAngstrom(alpha1);
  const lambda2 = found.alpha2 === undefined ? null : lengthInAngstrom(found.alpha2);
  if (lambda1 !== null && lambda2 !== null && alpha1 !== undefined) {
    const ratioValue = found.ratio === undefined ? null : lengthInAngstrom(found.ratio);
    const ratio = ratioValue !== null && ratioValue > 0 && ratioValue < 1 ? ratioValue : DEFAULT_KALPHA2_RATIO;
    const doublet = attempt('wavelength', alpha1, () => {
      const one = singleWavelength(lambda1);
      const two = singleWavelength(lambda2);
      return { label: `${one.lambda1} Å / ${two.lambda1} Å`, lambda1: one.lambda1, lambda2: two.lambda1, ratio };
    });
    if (doublet) return doublet;
  }
  const anodeText = found.anode ?? (alpha1 !== undefined && lambda1 === null ? alpha1 : undefined);
  if (anodeText !== undefined) {
    const symbol = anodeSymbol(anodeText);
    const anode = symbol ? attempt('anode', anodeText, () => parseWavelength(symbol)) : null;
    if (anode) return anode;
    if (!symbol && found.anode !== undefined) notes.push(`the X-ray source "${anodeText}" in the file was not recognised and is ignored`);
  }
  if (lambda1 !== null && alpha1 !== undefined) return attempt('wavelength', alpha1, () => singleWavelength(lambda1));
  return null;
}
