/**
 * A powder-pattern simulator for the tests, independent of the code it checks: its own d-spacings (any
 * cell, ./cell.ts), its own line shapes (a true Voigt through Weideman's Faddeeva expansion, ./voigt.ts,
 * or a pseudo-Voigt), its own beam lines and humps. It shares only the Pattern type and the seeded random
 * numbers (Poisson noise) with the app. Every pattern it makes is labelled simulated.
 *
 * Two ways in: simulatePowderPattern draws phases (a cell and its reflections, widths as below, counts
 * scaled to the strongest line); simulateLinePattern draws lines given directly by 2θ, area and shape,
 * counts per point proportional to the step.
 *
 * Broadening of a phase's lines, each stated as a FWHM in degrees 2θ and combined exactly (Gaussians add
 * in quadrature, Lorentzians linearly, and the Voigt is their convolution):
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

const RAD = Math.PI / 180;

/** Cu Kα1 and Kα2 wavelengths, Å (Hölzer et al., Phys. Rev. A 56, 4554 (1997)); Kα2/Kα1 intensity 0.5 (common practice). */
export const CU_KALPHA1 = 1.5405929;
export const CU_KALPHA2 = 1.5444274;
export const KALPHA2_RATIO = 0.5;

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

/**
 * A line shape of unit area, widths in degrees 2θ: a true Voigt of its Gaussian and Lorentzian FWHMs, or a
 * pseudo-Voigt of one FWHM, η·Lorentzian + (1 − η)·Gaussian (Thompson, Cox & Hastings, J. Appl. Cryst. 20,
 * 79 (1987)).
 */
export type LineShape = { gaussianFwhmDeg: number; lorentzianFwhmDeg: number } | { fwhmDeg: number; eta: number };

/** The shape's value (per degree) at dx degrees from its centre. */
export function lineProfile(dx: number, shape: LineShape): number {
  if ('eta' in shape) {
    const f = shape.fwhmDeg;
    const gauss = ((2 * Math.sqrt(Math.LN2 / Math.PI)) / f) * Math.exp((-4 * Math.LN2 * dx * dx) / (f * f));
    const lorentz = 2 / (Math.PI * f) / (1 + (4 * dx * dx) / (f * f));
    return shape.eta * lorentz + (1 - shape.eta) * gauss;
  }
  // σ of the Gaussian part; γ, the half width at half maximum, of the Lorentzian part.
  return voigtProfile(dx, shape.gaussianFwhmDeg / GAUSS_FWHM_PER_SIGMA, shape.lorentzianFwhmDeg / 2);
}

export interface InstrumentWidths {
  u: number;
  v: number;
  w: number;
  x: number;
  y: number;
}

/** A typical laboratory Bragg–Brentano instrument (from memory): about 0.06° FWHM at 30° 2θ. */
export const LAB_INSTRUMENT: InstrumentWidths = { u: 0.004, v: -0.002, w: 0.0018, x: 0.018, y: 0.012 };

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

/** What both ways in share: the range, the beam, humps, the sample's shift and the noise seed. */
interface PatternSettings {
  twoThetaMinDeg: number;
  twoThetaMaxDeg: number;
  stepDeg: number;
  seed: number;
  name?: string;
  /** The beam: default the Cu Kα doublet; add Cu Kβ or W Lα lines for satellites, or one line for a synchrotron. */
  beam?: readonly BeamLine[];
  /** Broad Gaussian humps (amorphous content): centre and FWHM in degrees 2θ, area relative to the lines' total area. */
  humps?: ReadonlyArray<{ centerDeg: number; fwhmDeg: number; areaRelative: number }>;
  /** Zero offset, degrees 2θ, added to every line position. */
  zeroDeg?: number;
  /** Specimen displacement, mm (see the module comment for its sign). */
  displacementMm?: number;
  /** Goniometer radius, mm; default 240. */
  goniometerRadiusMm?: number;
}

export interface SimulationSettings extends PatternSettings {
  phases: readonly SimulatedPhase[];
  /** Counts at the top of the strongest line. */
  peakCounts: number;
  backgroundCounts: number;
  instrument?: InstrumentWidths;
}

/** A line given directly. */
export interface GivenLine {
  /** Position at the beam's first line (before the sample's shift), degrees 2θ; the other beam lines fall at the same d. */
  twoThetaDeg: number;
  /** Counts summed over all points at the reference step, at the beam's first line (another beam line adds its weight × as many). */
  area: number;
  shape: LineShape;
}

export interface LineSimulationSettings extends PatternSettings {
  lines: readonly GivenLine[];
  /** Flat background, counts per point at the reference step. */
  backgroundCounts: number;
  /** The step at which areas and background are stated, default 0.02°: counts per point scale as step / this (the same counting time per degree). */
  referenceStepDeg?: number;
}

/** A line to draw: centre, integrated intensity (any unit) and shape. */
interface Line {
  twoThetaDeg: number;
  intensity: number;
  shape: LineShape;
}

interface SampleShift {
  zeroDeg: number;
  /** −2s/R, radians per unit cosθ. */
  displacementRad: number;
}

function shiftOf(settings: PatternSettings): SampleShift {
  return { zeroDeg: settings.zeroDeg ?? 0, displacementRad: (-2 * (settings.displacementMm ?? 0)) / (settings.goniometerRadiusMm ?? 240) };
}

/** θ (radians) and observed 2θ (degrees, with the sample's shift) of spacing d at wavelength λ; null if no line or past the range by over 2°. */
function placed(d: number, lambda: number, shift: SampleShift, maxDeg: number): { theta: number; twoThetaDeg: number } | null {
  const sinTheta = lambda / (2 * d);
  if (sinTheta >= 1) return null;
  const theta = Math.asin(sinTheta);
  const twoThetaDeg = (2 * theta + shift.displacementRad * Math.cos(theta)) / RAD + shift.zeroDeg;
  return twoThetaDeg > maxDeg + 2 ? null : { theta, twoThetaDeg };
}

function phaseLines(phase: CellPhase, beamLine: BeamLine, instrument: InstrumentWidths, maxDeg: number, shift: SampleShift): Line[] {
  const lines: Line[] = [];
  const lambda = beamLine.lambda;
  for (const { hkl, intensity } of phase.reflections) {
    const at = placed(dSpacing(phase.cell, hkl), lambda, shift, maxDeg);
    if (!at) continue;
    const tan = Math.tan(at.theta);
    const cos = Math.cos(at.theta);
    const g2 = instrument.u * tan * tan + instrument.v * tan + instrument.w;
    const strainFwhm = phase.strain ? (4 * phase.strain * tan) / RAD : 0;
    const sizeFwhm = phase.sizeNm ? (0.9 * lambda) / (phase.sizeNm * 10 * cos) / RAD : 0;
    lines.push({
      twoThetaDeg: at.twoThetaDeg,
      intensity: beamLine.weight * (phase.scale ?? 1) * intensity,
      shape: { gaussianFwhmDeg: Math.sqrt(g2 + strainFwhm * strainFwhm), lorentzianFwhmDeg: instrument.x * tan + instrument.y / cos + sizeFwhm },
    });
  }
  return lines;
}

function givenLines(given: readonly GivenLine[], beam: readonly BeamLine[], maxDeg: number, shift: SampleShift): Line[] {
  const first = beam[0]!.lambda;
  return beam.flatMap((b) =>
    given.flatMap((line) => {
      const at = placed(first / (2 * Math.sin((line.twoThetaDeg * RAD) / 2)), b.lambda, shift, maxDeg);
      return at ? [{ twoThetaDeg: at.twoThetaDeg, intensity: b.weight * line.area, shape: line.shape }] : [];
    }),
  );
}

function gridOf(settings: PatternSettings): Float64Array {
  const n = Math.floor((settings.twoThetaMaxDeg - settings.twoThetaMinDeg) / settings.stepDeg + 1e-9) + 1;
  return Float64Array.from({ length: n }, (_, i) => settings.twoThetaMinDeg + i * settings.stepDeg);
}

/** Adds each line, intensity × profile. A Voigt (costly) is drawn out to 60 FWHM: beyond that a Lorentzian tail is below the noise. */
function drawLines(x: Float64Array, lines: readonly Line[], into: Float64Array): void {
  for (const { twoThetaDeg, intensity, shape } of lines) {
    const reach = 'eta' in shape ? Infinity : 60 * (shape.gaussianFwhmDeg + shape.lorentzianFwhmDeg);
    for (let i = 0; i < x.length; i++) {
      const dx = x[i] - twoThetaDeg;
      if (Math.abs(dx) > reach) continue;
      into[i] += intensity * lineProfile(dx, shape);
    }
  }
}

/** Adds the humps, Gaussians with areas relative to the lines' total. */
function drawHumps(x: Float64Array, humps: PatternSettings['humps'], lines: readonly Line[], into: Float64Array): void {
  let linesArea = 0;
  for (const line of lines) linesArea += line.intensity;
  const asLines = (humps ?? []).map((h) => ({ twoThetaDeg: h.centerDeg, intensity: h.areaRelative * linesArea, shape: { gaussianFwhmDeg: h.fwhmDeg, lorentzianFwhmDeg: 0 } }));
  drawLines(x, asLines, into);
}

/** Poisson counts about the expected counts per point (the app's seeded generator), σ = √counts, labelled simulated. */
function countedPattern(x: Float64Array, expected: Float64Array, settings: PatternSettings): Pattern {
  const uniform = seededUniform(settings.seed);
  const y = new Float64Array(x.length);
  const sigma = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) {
    y[i] = poissonDeviate(expected[i], uniform);
    sigma[i] = Math.sqrt(Math.max(y[i], 1));
  }
  return {
    x,
    y,
    sigma,
    wavelength: null,
    source: { file: `${settings.name ?? 'test pattern'} (simulated)`, sha256: '', byteLength: 0, format: 'simulated' },
    meta: { simulated: 'yes: made by the test simulator' },
    readerNotes: [],
  };
}

/** A pattern of phases: counts scaled so the strongest line tops at peakCounts, over a flat background. */
export function simulatePowderPattern(settings: SimulationSettings): Pattern {
  const instrument = settings.instrument ?? LAB_INSTRUMENT;
  const beam = settings.beam ?? CU_KALPHA_DOUBLET;
  const shift = shiftOf(settings);
  const lines = settings.phases.map(asCellPhase).flatMap((p) => beam.flatMap((b) => phaseLines(p, b, instrument, settings.twoThetaMaxDeg, shift)));
  const x = gridOf(settings);
  const intensity = new Float64Array(x.length);
  drawLines(x, lines, intensity);
  let top = 0;
  for (const v of intensity) top = Math.max(top, v);
  drawHumps(x, settings.humps, lines, intensity);
  return countedPattern(x, intensity.map((v) => settings.backgroundCounts + (settings.peakCounts * v) / top), settings);
}

/** A pattern of lines given directly, counts per point proportional to the step (so patterns at two steps carry the same information). */
export function simulateLinePattern(settings: LineSimulationSettings): Pattern {
  const lines = givenLines(settings.lines, settings.beam ?? CU_KALPHA_DOUBLET, settings.twoThetaMaxDeg, shiftOf(settings));
  const x = gridOf(settings);
  const intensity = new Float64Array(x.length);
  drawLines(x, lines, intensity);
  drawHumps(x, settings.humps, lines, intensity);
  // At the reference step a point holds background + area × profile × step; at another step, step / reference as much.
  const reference = settings.referenceStepDeg ?? 0.02;
  const scale = settings.stepDeg / reference;
  return countedPattern(x, intensity.map((v) => (settings.backgroundCounts + v * reference) * scale), settings);
}

/** The area (GivenLine.area) whose line tops at this many counts per point at the reference step. */
export function areaForHeight(heightCounts: number, shape: LineShape, referenceStepDeg = 0.02): number {
  return heightCounts / (referenceStepDeg * lineProfile(0, shape));
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
