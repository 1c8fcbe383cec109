/**
 * The matching tolerance at any wavelength. The user states it in one of three ways and it is turned
 * into a half-window in the pattern's own 2θ per line, so a synchrotron pattern is held to the same
 * precision in d as a lab one:
 *
 *   at Cu Kα     Δ2θ_Cu (degrees, the lab habit): the relative tolerance in d of a line is
 *                δ = Δd/d = ½Δ2θ_Cu·cotθ_Cu (differentiating Bragg's law, λ = 2d sinθ), with θ_Cu the
 *                line's angle for Cu Kα1; in the pattern Δ2θ = 2δ·tanθ. At Cu Kα this is Δ2θ_Cu itself.
 *   in d         Δd in Å for every line: Δ2θ = 2(Δd/d)·tanθ.
 *   in FWHM      a multiple of the instrument's FWHM at the line (its Caglioti curve), or of the
 *                measured peak's own FWHM where no instrument profile is given.
 */
import { ANODE_LINES } from '../model/wavelengths.js';
import { DEG_TO_RAD } from '../model/units.js';

const RAD_TO_DEG = 180 / Math.PI;
const CU_KALPHA1 = ANODE_LINES.Cu.kAlpha1;

/**
 * A line with d below λ_Cu/2 has no Cu Kα angle: it takes the relative tolerance of a Cu line at this
 * 2θ (cotθ falls to 0 at 180°, so the last usable lab angle stands in for it).
 */
const CU_HIGHEST_TWO_THETA_DEG = 160;

export type MatchTolerance =
  | { kind: 'cu-two-theta'; deg: number }
  | { kind: 'd'; angstrom: number }
  | { kind: 'fwhm'; multiple: number };

/** The instrument's FWHM at a 2θ (degrees), from its profile, or null when no profile is given. */
export type FwhmAt = ((twoThetaDeg: number) => number) | null;

/** Relative d tolerance Δd/d of a line of spacing d under a tolerance stated in 2θ at Cu Kα1. */
export function relativeDToleranceAtCu(deg: number, d: number): number {
  const sinCu = Math.min(CU_KALPHA1 / (2 * d), Math.sin((CU_HIGHEST_TWO_THETA_DEG / 2) * DEG_TO_RAD));
  const thetaCu = Math.asin(sinCu);
  return (deg / 2) * DEG_TO_RAD / Math.tan(thetaCu);
}

/**
 * Half-window, degrees in the pattern's 2θ, for a peak at `twoThetaDeg` measured with Kα1 `lambda`
 * (`peakFwhmDeg`: the peak's own fitted FWHM, used in FWHM units when there is no instrument profile).
 */
export function windowDeg(tolerance: MatchTolerance, twoThetaDeg: number, lambda: number, peakFwhmDeg: number, fwhmAt: FwhmAt): number {
  const theta = (twoThetaDeg / 2) * DEG_TO_RAD;
  if (tolerance.kind === 'fwhm') {
    const fwhm = fwhmAt ? fwhmAt(twoThetaDeg) : peakFwhmDeg;
    return tolerance.multiple * (Number.isFinite(fwhm) && fwhm > 0 ? fwhm : peakFwhmDeg);
  }
  const d = lambda / (2 * Math.sin(theta));
  const relative = tolerance.kind === 'd' ? tolerance.angstrom / d : relativeDToleranceAtCu(tolerance.deg, d);
  return 2 * relative * Math.tan(theta) * RAD_TO_DEG;
}

/** The tolerance in words, for the result and the reasons. */
export function describeTolerance(tolerance: MatchTolerance, fwhmAt: FwhmAt): string {
  switch (tolerance.kind) {
    case 'cu-two-theta':
      return `${tolerance.deg}° 2θ at Cu Kα1, held as the same precision in d at this wavelength`;
    case 'd':
      return `${tolerance.angstrom} Å in d`;
    default:
      return `${tolerance.multiple} × the ${fwhmAt ? "instrument profile's" : "measured peak's own"} FWHM`;
  }
}
