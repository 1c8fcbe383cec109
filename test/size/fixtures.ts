/** Synthetic fitted peaks for the size tests: widths made from known instrument and sample parts. */
import type { ReferenceLine } from '../../src/core/model/reference.js';
import type { FittedPeak } from '../../src/core/model/peak.js';
import { DEG_TO_RAD, dFromTwoTheta, twoThetaFromD } from '../../src/core/model/units.js';
import { thompsonCoxHastings, pseudoVoigtIntegralBreadth } from '../../src/core/process/profiles.js';
import { TYPICAL_LAB_INSTRUMENT, type InstrumentBroadening } from '../../src/core/crystal/simulate.js';
import type { Reference } from '../../src/core/model/reference.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { fitInstrumentProfile, type InstrumentProfile } from '../../src/core/size/instrument.js';
import type { SizeStrainPoint } from '../../src/core/size/size-strain-points.js';
import { PHI_GAUSSIAN, PHI_LORENTZIAN, voigtIntegralBreadth } from '../../src/core/size/voigt.js';

export const CU_KA1 = 1.5405929;

export function fittedPeak(twoTheta: number, fwhm: number, eta: number, relSigma = 0.01): FittedPeak {
  const beta = pseudoVoigtIntegralBreadth(fwhm, eta);
  return {
    twoTheta,
    twoThetaSigma: 0.001,
    d: dFromTwoTheta(twoTheta, CU_KA1),
    height: 1000,
    heightSigma: 10,
    area: 1000 * beta,
    areaSigma: 10,
    fwhm,
    fwhmSigma: relSigma * fwhm,
    integralBreadth: beta,
    integralBreadthSigma: relSigma * beta,
    eta,
    etaSigma: 0.02,
    group: 0,
    groupChi2: 1,
    overlapped: false,
  };
}

/** The pseudo-Voigt (FWHM, η) of instrument ⊗ sample, as the simulator builds it (Thompson, Cox & Hastings 1987). */
export function broadenedProfile(
  twoTheta: number,
  sizeNm: number | null,
  microstrain = 0,
  instrument: InstrumentBroadening = TYPICAL_LAB_INSTRUMENT,
  k = 0.9,
): { fwhm: number; eta: number } {
  const theta = (twoTheta / 2) * DEG_TO_RAD;
  const tan = Math.tan(theta);
  const cos = Math.cos(theta);
  const g2 = instrument.u * tan * tan + instrument.v * tan + instrument.w;
  const lInst = instrument.x * tan + instrument.y / cos;
  const lSize = sizeNm ? (k * CU_KA1) / (sizeNm * 10 * cos) / DEG_TO_RAD : 0;
  const gStrain = (4 * microstrain * tan) / DEG_TO_RAD;
  return thompsonCoxHastings(Math.sqrt(g2 + gStrain * gStrain), lInst + lSize);
}

/** Silicon lines (a = 5.431 Å, common practice) as a line-profile standard. */
export function siliconStandard(): Reference {
  const a = 5.431;
  const hkls: Array<[number, number, number]> = [
    [1, 1, 1], [2, 2, 0], [3, 1, 1], [4, 0, 0], [3, 3, 1], [4, 2, 2], [5, 1, 1], [4, 4, 0], [5, 3, 1],
  ];
  const lines: ReferenceLine[] = hkls.map((hkl) => ({ d: a / Math.hypot(...hkl), intensity: 50, hkl }));
  return { name: 'silicon', formula: 'Si', tags: ['standard'], source: 'cubic cell a = 5.431 Å (common practice)', lines };
}

/** A simple cubic test phase (primitive, a = 4.2 Å) with hkl on every line up to 2θ = 120°. */
export function cubicPhase(a = 4.2): Reference {
  const lines: ReferenceLine[] = [];
  const seen = new Set<number>();
  for (let h = 0; h <= 5; h++)
    for (let k = 0; k <= h; k++)
      for (let l = 0; l <= k; l++) {
        const s = h * h + k * k + l * l;
        if (s === 0 || seen.has(s)) continue;
        const d = a / Math.sqrt(s);
        if (!(twoThetaFromD(d, CU_KA1) < 120)) continue;
        seen.add(s);
        lines.push({ d, intensity: 40, hkl: [h, k, l] });
      }
  lines.sort((x, y) => y.d - x.d);
  return { name: 'test cubic', formula: 'X', tags: ['target'], source: 'test phase', lines };
}

/** The instrument profile of the simulator's typical lab instrument, fitted from exact silicon peak widths below 130° 2θ. */
export function typicalInstrumentProfile(): InstrumentProfile {
  const peaks = siliconStandard()
    .lines.map((l) => twoThetaFromD(l.d, CU_KA1))
    .filter((tt) => tt < 130)
    .map((tt) => {
      const p = broadenedProfile(tt, null);
      return fittedPeak(tt, p.fwhm, p.eta);
    });
  return fitInstrumentProfile(peaks, siliconStandard(), { wavelength: anodeWavelength('Cu'), name: 'typical lab instrument (simulated)', date: '2025-01-01' });
}

/**
 * Exact sample broadening of a size (Lorentzian FWHM Kλ/(D cosθ)) and a strain (Gaussian FWHM 4ε tanθ)
 * (Scherrer 1918; Stokes & Wilson 1944), with the whole integral breadth of their Voigt (exact
 * convolution, de Keijser et al., J. Appl. Cryst. 15, 308 (1982)); 1 % σ on every width, at least
 * `gaussianSigmaFloorDeg` on the Gaussian part. `scatter` multiplies the Lorentzian parts and
 * `gaussianScatter` adds to the Gaussian parts (degrees), reflection by reflection.
 */
export function exactSizeStrainPoints(
  sizeNm: number,
  strain: number,
  angles: readonly number[],
  scatter: readonly number[] = [],
  options: { gaussianScatterDeg?: readonly number[]; gaussianSigmaFloorDeg?: number } = {},
): SizeStrainPoint[] {
  return angles.map((tt, i) => {
    const theta = (tt / 2) * DEG_TO_RAD;
    const l = ((0.9 * CU_KA1) / (sizeNm * 10 * Math.cos(theta)) / DEG_TO_RAD) * (scatter[i] ?? 1);
    const g = Math.max(0, (4 * strain * Math.tan(theta)) / DEG_TO_RAD + (options.gaussianScatterDeg?.[i] ?? 0));
    const beta = voigtIntegralBreadth({ lorentzian: l / PHI_LORENTZIAN, gaussian: g / PHI_GAUSSIAN });
    return {
      twoThetaDeg: tt,
      lorentzianDeg: l,
      lorentzianSigmaDeg: 0.01 * l,
      gaussianDeg: g,
      gaussianSigmaDeg: Math.max(0.01 * g, options.gaussianSigmaFloorDeg ?? 0.002),
      integralBreadthDeg: beta,
      integralBreadthSigmaDeg: 0.01 * beta,
      hkl: null,
    };
  });
}
