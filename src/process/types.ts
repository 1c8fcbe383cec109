/** A fitted diffraction peak (Kα1 component; its Kα2 partner is part of the model). Angles in degrees 2θ. */
export interface FittedPeak {
  twoTheta: number;
  twoThetaSigma: number;
  /** d-spacing in Å from the Kα1 wavelength. */
  d: number;
  /** Peak height above background (Kα1 component), counts. */
  height: number;
  heightSigma: number;
  /** Integrated intensity of the Kα1 component, counts·degrees. */
  area: number;
  areaSigma: number;
  /** Full width at half maximum, degrees 2θ. */
  fwhm: number;
  fwhmSigma: number;
  /** Integral breadth (area / height), degrees 2θ. */
  integralBreadth: number;
  integralBreadthSigma: number;
  /** Pseudo-Voigt Lorentzian fraction, 0 (Gaussian) to 1 (Lorentzian). */
  eta: number;
  etaSigma: number;
  /** Index of the fitted group of overlapping peaks this peak belongs to. */
  group: number;
  /** Reduced χ² of the group's fit. */
  groupChi2: number;
  /** True when a neighbour overlaps so closely that the breadth is not trustworthy. */
  overlapped: boolean;
}
