import type { Wavelength } from './wavelengths.js';

/** Where a pattern came from: the original bytes stay untouched; their checksum identifies them. */
export interface PatternSource {
  /** File name or path as the user gave it. */
  file: string;
  /** SHA-256 of the original file bytes, hex. */
  sha256: string;
  /** Size of the original file in bytes. */
  byteLength: number;
  /** Reader that understood the file: 'xy', 'csv', 'pdcif', 'simulated'. */
  format: string;
}

/**
 * A powder diffraction pattern: x is 2θ in degrees (strictly increasing, after reading),
 * y the intensity in counts, sigma its standard uncertainty (√counts where the file gives none).
 */
export interface Pattern {
  x: Float64Array;
  y: Float64Array;
  sigma: Float64Array;
  /** Wavelength named in the file, if any (the user's choice overrides it). */
  wavelength: Wavelength | null;
  source: PatternSource;
  /** Free metadata found in the file (sample name, date, instrument...). */
  meta: Record<string, string>;
  /** Notes on what the reader did (sorted descending x, merged duplicate x...), for the user. */
  readerNotes: string[];
  /** Line of the file where the data ends, for messages about the data as a whole. */
  dataEndLine?: number;
}
