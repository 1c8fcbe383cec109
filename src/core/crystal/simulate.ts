import { sha256Hex } from '../model/checksum.js';
import type { Pattern } from '../model/pattern.js';
import { twoThetaFromD, DEG_TO_RAD } from '../model/units.js';
import type { Wavelength } from '../model/wavelengths.js';
import { pseudoVoigt, thompsonCoxHastings } from '../process/profiles.js';
import type { ReferenceLine } from '../model/reference.js';
import { poissonDeviate, seededUniform } from '../numeric/random.js';
import { lowerBound } from '../model/sorted.js';

/**
 * Instrument line broadening in the Thompson–Cox–Hastings form: Gaussian FWHM² = U tan²θ + V tanθ + W
 * (Caglioti, Paoletti & Ricci, Nucl. Instrum. 3, 223 (1958)), Lorentzian FWHM = X tanθ + Y / cosθ.
 * All in degrees 2θ (U, V, W in deg²).
 */
export interface InstrumentBroadening {
  u: number;
  v: number;
  w: number;
  x: number;
  y: number;
}

/** A laboratory Bragg–Brentano instrument with Cu tube: FWHM about 0.06° near 28° 2θ (typical; common practice). */
export const TYPICAL_LAB_INSTRUMENT: InstrumentBroadening = { u: 0.004, v: -0.002, w: 0.0016, x: 0.0, y: 0.02 };

export interface SimulatedPhase {
  lines: readonly ReferenceLine[];
  /** Relative amount: multiplies the line intensities. */
  scale: number;
  /** Volume-weighted crystallite size in nm (Lorentzian size broadening); omit for no size broadening. */
  sizeNm?: number;
  /** Microstrain ε (Gaussian broadening 4ε tanθ); omit for none. */
  microstrain?: number;
  /** Extra weight per line (preferred orientation, for example). */
  lineWeight?: (line: ReferenceLine) => number;
}

export interface SimulationOptions {
  phases: readonly SimulatedPhase[];
  wavelength: Wavelength;
  twoThetaMinDeg: number;
  twoThetaMaxDeg: number;
  stepDeg: number;
  instrument?: InstrumentBroadening;
  /** Scherrer constant used to turn sizeNm into a Lorentzian FWHM (default 0.9). */
  scherrerK?: number;
  /** Constant zero offset added to every position, degrees. */
  zeroShiftDeg?: number;
  /** Sample displacement shift, Δ2θ = displacementCosDeg · cosθ, degrees. */
  displacementCosDeg?: number;
  /** Height of the tallest peak above background, in counts, before noise. */
  peakCounts: number;
  /** Background in counts at a 2θ (default: 60 counts plus a decaying low-angle slope). */
  background?: (twoThetaDeg: number) => number;
  /** Poisson counting noise with this seed; omit for a noise-free pattern. */
  noiseSeed?: number;
  /** File name recorded in the pattern's source. */
  name?: string;
}

const DEFAULT_BACKGROUND = (tt: number): number => 60 + 240 * Math.exp(-tt / 8);

/**
 * Simulate a powder pattern from reference lines: each line a TCH pseudo-Voigt of the instrument's
 * and the sample's broadening, with its Kα2 partner, on a background, with optional Poisson noise.
 * The result is labelled as simulated and carries the truth it was made from in its metadata.
 */
export function simulatePattern(options: SimulationOptions): Pattern {
  const instrument = options.instrument ?? TYPICAL_LAB_INSTRUMENT;
  const k = options.scherrerK ?? 0.9;
  const zero = options.zeroShiftDeg ?? 0;
  const displacement = options.displacementCosDeg ?? 0;
  const background = options.background ?? DEFAULT_BACKGROUND;
  const n = Math.floor((options.twoThetaMaxDeg - options.twoThetaMinDeg) / options.stepDeg + 1e-9) + 1;
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = options.twoThetaMinDeg + i * options.stepDeg;
  const signal = new Float64Array(n);
  const { wavelength } = options;
  const components: Array<{ lambda: number; weight: number }> = [{ lambda: wavelength.lambda1, weight: 1 }];
  if (wavelength.lambda2 !== null && wavelength.ratio > 0) components.push({ lambda: wavelength.lambda2, weight: wavelength.ratio });

  for (const phase of options.phases) {
    for (const line of phase.lines) {
      const intensity = (line.intensity ?? 10) * phase.scale * (phase.lineWeight ? phase.lineWeight(line) : 1);
      if (!(intensity > 0)) continue;
      for (const component of components) {
        const tt0 = twoThetaFromD(line.d, component.lambda);
        if (!Number.isFinite(tt0)) continue;
        const theta = (tt0 / 2) * DEG_TO_RAD;
        const tt = tt0 + zero + displacement * Math.cos(theta);
        const tan = Math.tan(theta);
        const cos = Math.cos(theta);
        const gInst2 = Math.max(instrument.u * tan * tan + instrument.v * tan + instrument.w, 1e-8);
        const lInst = instrument.x * tan + instrument.y / cos;
        const lSize = phase.sizeNm ? (k * component.lambda) / (phase.sizeNm * 10 * cos) / DEG_TO_RAD : 0;
        const gStrain = phase.microstrain ? (4 * phase.microstrain * tan) / DEG_TO_RAD : 0;
        const { fwhm, eta } = thompsonCoxHastings(Math.sqrt(gInst2 + gStrain * gStrain), lInst + lSize);
        const half = 60 * fwhm;
        const lo = lowerBound(x, tt - half);
        const hi = lowerBound(x, tt + half);
        const area = intensity * component.weight;
        for (let i = lo; i < hi; i++) signal[i] += area * pseudoVoigt(x[i] - tt, fwhm, eta);
      }
    }
  }

  let peak = 0;
  for (let i = 0; i < n; i++) if (signal[i] > peak) peak = signal[i];
  const factor = peak > 0 ? options.peakCounts / peak : 0;
  const y = new Float64Array(n);
  const sigma = new Float64Array(n);
  const uniform = options.noiseSeed === undefined ? null : seededUniform(options.noiseSeed);
  for (let i = 0; i < n; i++) {
    const mean = signal[i] * factor + background(x[i]);
    y[i] = uniform ? poissonDeviate(mean, uniform) : mean;
    sigma[i] = Math.sqrt(Math.max(y[i], 1));
  }

  const truth = {
    simulated: true,
    wavelength: wavelength.label,
    phases: options.phases.map((p) => ({ scale: p.scale, sizeNm: p.sizeNm ?? null, microstrain: p.microstrain ?? null, lines: p.lines.length })),
    zeroShiftDeg: zero,
    displacementCosDeg: displacement,
    peakCounts: options.peakCounts,
    noiseSeed: options.noiseSeed ?? null,
    instrument,
  };
  const name = options.name ?? 'simulated pattern';
  return {
    x,
    y,
    sigma,
    wavelength,
    source: { file: name, sha256: sha256Hex(new Uint8Array(y.buffer, y.byteOffset, y.byteLength)), byteLength: y.byteLength, format: 'simulated' },
    meta: { simulated: 'true', truth: JSON.stringify(truth) },
    readerNotes: ['simulated by Crystallog; not a measurement'],
  };
}


/** Write a pattern as a plain two-column text file (used for demo data and tests). */
export function patternToXyText(pattern: Pattern, header: string[] = [], options: { xDecimals?: number } = {}): string {
  const out: string[] = header.map((h) => `# ${h}`);
  const xDecimals = options.xDecimals ?? 4;
  for (let i = 0; i < pattern.x.length; i++) out.push(`${pattern.x[i].toFixed(xDecimals)} ${pattern.y[i].toFixed(pattern.source.format === 'simulated' && Number.isInteger(pattern.y[i]) ? 0 : 3)}`);
  return out.join('\n') + '\n';
}
