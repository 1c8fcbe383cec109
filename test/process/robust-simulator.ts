/**
 * A small pattern simulator for the robust-search tests, written apart from the code it checks (it uses
 * nothing from src/): pseudo-Voigt lines (Thompson, Cox & Hastings' η-mix of unit-area Gaussian and
 * Lorentzian of one FWHM) with a Cu Kα2 partner at the same d (λ from Hölzer et al., Phys. Rev. A 56,
 * 4554 (1997), ratio 0.5 — common practice), a broad Gaussian amorphous hump, a flat background and
 * Poisson noise from its own seeded generator. Counts per point are proportional to the step (the same
 * counting time per degree), so patterns at two steps carry the same information.
 */
export const CU_KALPHA1 = 1.5405929;
export const CU_KALPHA2 = 1.5444274;
export const KALPHA2_RATIO = 0.5;

export interface SimLine {
  twoTheta: number;
  /** Kα1 counts summed over all points at the reference step (the Kα2 partner adds half as many). */
  area: number;
  fwhm: number;
  eta: number;
}

export interface SimPattern {
  fromDeg: number;
  toDeg: number;
  stepDeg: number;
  /** Flat background, counts per point at `referenceStepDeg`. */
  background: number;
  lines: SimLine[];
  /** Broad Gaussian hump: centre, FWHM and its counts summed over all points at the reference step. */
  hump?: { twoTheta: number; fwhm: number; area: number };
  seed: number;
  /** Add the Kα2 partners (default true). */
  kAlpha2?: boolean;
  referenceStepDeg?: number;
}

function pseudoVoigtUnitArea(dx: number, fwhm: number, eta: number): number {
  const gauss = (2 * Math.sqrt(Math.LN2 / Math.PI)) / fwhm * Math.exp((-4 * Math.LN2 * dx * dx) / (fwhm * fwhm));
  const lorentz = (2 / (Math.PI * fwhm)) / (1 + (4 * dx * dx) / (fwhm * fwhm));
  return eta * lorentz + (1 - eta) * gauss;
}

function partner(twoTheta: number): number {
  const s = (CU_KALPHA2 / CU_KALPHA1) * Math.sin((twoTheta * Math.PI) / 360);
  return (360 / Math.PI) * Math.asin(s);
}

/** xorshift128+ folded to [0, 1): a generator of its own, not the project's. */
function xorshift(seed: number): () => number {
  let a = (seed * 2654435761) >>> 0 || 1;
  let b = (seed ^ 0x9e3779b9) >>> 0 || 2;
  return () => {
    let t = a;
    const s = b;
    a = s;
    t ^= t << 11;
    t ^= t >>> 8;
    b = (t ^ s ^ (s >>> 19)) >>> 0;
    return ((a + b) >>> 0) / 4294967296;
  };
}

/** Poisson deviate: Knuth's method below 30, else a normal approximation rounded (ample for tests). */
function poisson(mean: number, uniform: () => number): number {
  if (mean <= 0) return 0;
  if (mean < 30) {
    const limit = Math.exp(-mean);
    let k = 0;
    let p = uniform();
    while (p > limit) {
      k++;
      p *= uniform();
    }
    return k;
  }
  let u = uniform();
  while (u <= 0) u = uniform();
  const z = Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * uniform());
  return Math.max(0, Math.round(mean + Math.sqrt(mean) * z));
}

export function simulate(spec: SimPattern): { x: Float64Array; y: Float64Array; expected: Float64Array } {
  const n = Math.round((spec.toDeg - spec.fromDeg) / spec.stepDeg) + 1;
  const scale = spec.stepDeg / (spec.referenceStepDeg ?? 0.02);
  const x = new Float64Array(n);
  const expected = new Float64Array(n);
  const y = new Float64Array(n);
  const uniform = xorshift(spec.seed);
  for (let i = 0; i < n; i++) {
    const tt = spec.fromDeg + i * spec.stepDeg;
    x[i] = tt;
    // Areas are per degree at the reference step: counts per point = area · profile · reference step.
    let v = spec.background;
    for (const line of spec.lines) {
      v += line.area * 0.02 * pseudoVoigtUnitArea(tt - line.twoTheta, line.fwhm, line.eta);
      if (spec.kAlpha2 !== false) v += KALPHA2_RATIO * line.area * 0.02 * pseudoVoigtUnitArea(tt - partner(line.twoTheta), line.fwhm, line.eta);
    }
    if (spec.hump) v += spec.hump.area * 0.02 * pseudoVoigtUnitArea(tt - spec.hump.twoTheta, spec.hump.fwhm, 0);
    expected[i] = v * scale;
    y[i] = poisson(expected[i], uniform);
  }
  return { x, y, expected };
}

/** Height (counts per point at the reference step) of a pseudo-Voigt of unit area → area for that height. */
export function areaForHeight(height: number, fwhm: number, eta: number): number {
  return height / (0.02 * pseudoVoigtUnitArea(0, fwhm, eta));
}
