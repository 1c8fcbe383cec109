/**
 * A powder-pattern simulator for the accuracy tests, independent of the code it checks: its own
 * d-spacings (any cell, ./cell.ts), its own true-Voigt profiles (./voigt.ts, Weideman's Faddeeva expansion), its own doublet and noise. It
 * shares only the Pattern type and the seeded random numbers with the app. Every pattern it makes is
 * labelled simulated.
 *
 * Broadening, each stated as a FWHM in degrees 2θ and combined exactly (Gaussians add in quadrature,
 * Lorentzians linearly, and the Voigt is their convolution):
 * - instrument: Gaussian FWHM² = U tan²θ + V tanθ + W (Caglioti, Paoletti & Ricci, Nucl. Instrum. 3, 223
 *   (1958)), Lorentzian FWHM = X tanθ + Y / cosθ;
 * - size: Lorentzian FWHM = Kλ/(D cosθ) with K = 0.9 (Scherrer 1918);
 * - strain: Gaussian FWHM = 4ε tanθ (Stokes & Wilson 1944).
 *
 * Line positions carry the sample's shift: a zero offset added to every 2θ and a specimen displacement
 * s (mm, on a goniometer of radius R) giving Δ2θ = −2 s cosθ / R radians (Klug & Alexander, X-ray
 * Diffraction Procedures, 2nd ed. 1974, from memory).
 */
import type { Pattern } from '../../src/core/model/pattern.js';
import { poissonDeviate, seededUniform } from '../../src/core/numeric/random.js';
import { dSpacing, type SimulatedCell, type SimulatedReflection } from './cell.js';
import { GAUSS_FWHM_PER_SIGMA, voigtProfile } from './voigt.js';

/** σ of a Gaussian with this FWHM, and γ (half width at half maximum) of a Lorentzian with this FWHM. */
const sigmaOfGaussianFwhm = (fwhm: number): number => fwhm / GAUSS_FWHM_PER_SIGMA;
const gammaOfLorentzianFwhm = (fwhm: number): number => fwhm / 2;

const RAD = Math.PI / 180;

/** Cu Kα1 and Kα2 wavelengths, Å (Hölzer et al., Phys. Rev. A 56, 4554 (1997)); Kα2/Kα1 intensity 0.5 (common practice). */
export const CU_KALPHA1 = 1.5405929;
export const CU_KALPHA2 = 1.5444274;
export const KALPHA2_RATIO = 0.5;

export interface InstrumentWidths {
  u: number;
  v: number;
  w: number;
  x: number;
  y: number;
}

/** A typical laboratory Bragg–Brentano instrument (from memory): about 0.06° FWHM at 30° 2θ. */
export const LAB_INSTRUMENT: InstrumentWidths = { u: 0.004, v: -0.002, w: 0.0018, x: 0.018, y: 0.012 };

/** Cu Kβ1 and W Lα1 wavelengths, Å, from xraylib LineEnergy (Cu KM3 8.9053 keV, W L3M5 8.3976 keV; Cu KL3 8.0478 keV for Kα1) with λ = 12.39842 Å·keV / E. */
export const CU_KBETA1 = 12.39842 / 8.9053;
export const W_LALPHA1 = 12.39842 / 8.3976;

/** A beam component: wavelength and its intensity relative to Kα1 (or to the main line). */
export interface BeamLine {
  lambda: number;
  weight: number;
}

export const CU_KALPHA_DOUBLET: readonly BeamLine[] = [
  { lambda: CU_KALPHA1, weight: 1 },
  { lambda: CU_KALPHA2, weight: KALPHA2_RATIO },
];

interface PhaseBroadening {
  /** Multiplies the phase's intensities (for mixtures); default 1. */
  scale?: number;
  sizeNm?: number;
  strain?: number;
}

/** A cubic phase given by its edge and its intensities per reflection class h² + k² + l² (absent: no line). */
export interface CubicPhase extends PhaseBroadening {
  a: number;
  intensities: ReadonlyMap<number, number>;
}

/** A phase of any cell given by its reflections (see reflectionList in ./cell.ts). */
export interface CellPhase extends PhaseBroadening {
  cell: SimulatedCell;
  reflections: readonly SimulatedReflection[];
}

export type SimulatedPhase = CubicPhase | CellPhase;

function asCellPhase(phase: SimulatedPhase): CellPhase {
  if ('cell' in phase) return phase;
  const { a, intensities, ...broadening } = phase;
  return {
    ...broadening,
    cell: { a, b: a, c: a, alpha: 90, beta: 90, gamma: 90 },
    reflections: [...intensities].map(([s, intensity]) => ({ hkl: hklOfClass(s)!, intensity })),
  };
}

export interface SimulationSettings {
  phases: readonly SimulatedPhase[];
  twoThetaMinDeg: number;
  twoThetaMaxDeg: number;
  stepDeg: number;
  /** Counts at the top of the strongest line. */
  peakCounts: number;
  backgroundCounts: number;
  seed: number;
  instrument?: InstrumentWidths;
  name?: string;
  /** The beam: default the Cu Kα doublet; add Cu Kβ or W Lα lines for satellites, or one line for a synchrotron. */
  beam?: readonly BeamLine[];
  /** Broad humps (amorphous content): centre and FWHM in degrees 2θ, area relative to the crystalline area. */
  humps?: ReadonlyArray<{ centerDeg: number; fwhmDeg: number; areaRelative: number }>;
  /** Zero offset, degrees 2θ, added to every line position. */
  zeroDeg?: number;
  /** Specimen displacement, mm (see the module comment for its sign). */
  displacementMm?: number;
  /** Goniometer radius, mm; default 240. */
  goniometerRadiusMm?: number;
}

interface Line {
  twoThetaDeg: number;
  intensity: number;
  gaussianFwhm: number;
  lorentzianFwhm: number;
}

interface SampleShift {
  zeroDeg: number;
  /** −2s/R, radians per unit cosθ. */
  displacementRad: number;
}

function linesOf(phase: CellPhase, lambda: number, instrument: InstrumentWidths, maxDeg: number, shift: SampleShift): Line[] {
  const lines: Line[] = [];
  for (const { hkl, intensity } of phase.reflections) {
    const d = dSpacing(phase.cell, hkl);
    const sinTheta = lambda / (2 * d);
    if (sinTheta >= 1) continue;
    const theta = Math.asin(sinTheta);
    const twoThetaDeg = (2 * theta + shift.displacementRad * Math.cos(theta)) / RAD + shift.zeroDeg;
    if (twoThetaDeg > maxDeg + 2) continue;
    const tan = Math.tan(theta);
    const cos = Math.cos(theta);
    const g2 = instrument.u * tan * tan + instrument.v * tan + instrument.w;
    const strainFwhm = phase.strain ? (4 * phase.strain * tan) / RAD : 0;
    const sizeFwhm = phase.sizeNm ? (0.9 * lambda) / (phase.sizeNm * 10 * cos) / RAD : 0;
    lines.push({
      twoThetaDeg,
      intensity,
      gaussianFwhm: Math.sqrt(g2 + strainFwhm * strainFwhm),
      lorentzianFwhm: instrument.x * tan + instrument.y / cos + sizeFwhm,
    });
  }
  return lines;
}

export function simulatePowderPattern(settings: SimulationSettings): Pattern {
  const instrument = settings.instrument ?? LAB_INSTRUMENT;
  const n = Math.floor((settings.twoThetaMaxDeg - settings.twoThetaMinDeg) / settings.stepDeg + 1e-9) + 1;
  const x = new Float64Array(n);
  for (let i = 0; i < n; i++) x[i] = settings.twoThetaMinDeg + i * settings.stepDeg;
  const intensity = new Float64Array(n);
  const beam = settings.beam ?? CU_KALPHA_DOUBLET;
  const shift: SampleShift = { zeroDeg: settings.zeroDeg ?? 0, displacementRad: (-2 * (settings.displacementMm ?? 0)) / (settings.goniometerRadiusMm ?? 240) };
  const lines = settings.phases.map(asCellPhase).flatMap((p) =>
    beam.flatMap((b) => linesOf(p, b.lambda, instrument, settings.twoThetaMaxDeg, shift).map((l) => ({ ...l, weight: b.weight * (p.scale ?? 1) }))),
  );
  for (const line of lines) {
    const sigma = sigmaOfGaussianFwhm(line.gaussianFwhm);
    const gamma = gammaOfLorentzianFwhm(line.lorentzianFwhm);
    // Profiles are drawn out to 60 FWHM: beyond that a Lorentzian tail is below the noise.
    const reach = 60 * (line.gaussianFwhm + line.lorentzianFwhm);
    for (let i = 0; i < n; i++) {
      const dx = x[i] - line.twoThetaDeg;
      if (Math.abs(dx) > reach) continue;
      intensity[i] += line.weight * line.intensity * voigtProfile(dx, sigma, gamma);
    }
  }
  let top = 0;
  for (const v of intensity) top = Math.max(top, v);
  let crystallineArea = 0;
  for (const line of lines) crystallineArea += line.weight * line.intensity;
  for (const hump of settings.humps ?? []) {
    const sigma = sigmaOfGaussianFwhm(hump.fwhmDeg);
    for (let i = 0; i < n; i++) intensity[i] += (hump.areaRelative * crystallineArea * voigtProfile(x[i] - hump.centerDeg, sigma, 0));
  }
  const uniform = seededUniform(settings.seed);
  const y = new Float64Array(n);
  const sigmaY = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const mean = settings.backgroundCounts + (settings.peakCounts * intensity[i]) / top;
    y[i] = poissonDeviate(mean, uniform);
    sigmaY[i] = Math.sqrt(Math.max(y[i], 1));
  }
  return {
    x,
    y,
    sigma: sigmaY,
    wavelength: null,
    source: { file: `${settings.name ?? 'test pattern'} (simulated)`, sha256: '', byteLength: 0, format: 'simulated' },
    meta: { simulated: 'yes: made by the accuracy-test simulator' },
    readerNotes: [],
  };
}

/** Reflection classes h² + k² + l² of a face-centred cubic lattice up to a limit (all h, k, l even or all odd). */
export function faceCentredClasses(limit: number): number[] {
  const out = new Set<number>();
  for (let h = 0; h * h <= limit; h++)
    for (let k = 0; k <= h; k++)
      for (let l = 0; l <= k; l++) {
        const s = h * h + k * k + l * l;
        const parity = (h % 2) + (k % 2) + (l % 2);
        if (s > 0 && s <= limit && (parity === 0 || parity === 3)) out.add(s);
      }
  return [...out].sort((a, b) => a - b);
}

/** One h k l (h ≥ k ≥ l ≥ 0) with h² + k² + l² = s, or null. */
export function hklOfClass(s: number): [number, number, number] | null {
  for (let h = 0; h * h <= s; h++)
    for (let k = 0; k <= h; k++)
      for (let l = 0; l <= k; l++) if (h * h + k * k + l * l === s) return [h, k, l];
  return null;
}
