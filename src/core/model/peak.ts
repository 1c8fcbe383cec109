import type { Wavelength } from './wavelengths.js';

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
  /** Correlation coefficient of the FWHM and integral breadth from the fit's covariance (both come from the same widths and η). */
  fwhmBreadthCorrelation?: number;
  /** Pseudo-Voigt Lorentzian fraction, 0 (Gaussian) to 1 (Lorentzian). */
  eta: number;
  etaSigma: number;
  /** Index of the fitted group of overlapping peaks this peak belongs to. */
  group: number;
  /** Reduced χ² of the group's fit. */
  groupChi2: number;
  /** True when a neighbour overlaps so closely that the breadth is not trustworthy. */
  overlapped: boolean;
  /** Thompson–Cox–Hastings profile only: Gaussian and Lorentzian FWHM, degrees 2θ. */
  gaussianFwhm?: number;
  gaussianFwhmSigma?: number;
  lorentzianFwhm?: number;
  lorentzianFwhmSigma?: number;
  /** Asymmetric fits only: low-angle half has FWHM·(1 + a), high-angle half FWHM·(1 − a). */
  asymmetry?: number;
  asymmetrySigma?: number;
}

/** Peak profile: pseudo-Voigt with free η, or the Thompson–Cox–Hastings mix of Gaussian and Lorentzian FWHMs. */
export type ProfileModel = 'pseudo-voigt' | 'tch';

/** A starting point for one peak; anything left out is estimated from the data. */
export interface PeakGuess {
  twoTheta: number;
  /** Height above the background, counts. */
  height?: number;
  fwhm?: number;
  eta?: number;
}

export interface PeakFitOptions {
  /** Source: the Kα2 partner (same d at λ2, intensity ratio × Kα1) is part of every peak's model. */
  wavelength: Wavelength;
  /** Default 'pseudo-voigt'. */
  profile?: ProfileModel;
  /** Fit a split-profile low-angle asymmetry per peak (default false). */
  asymmetry?: boolean;
  /**
   * Each peak is modelled from windowFwhm·FWHM below its Kα1 line to as far above its Kα2 line (default:
   * until a Lorentzian tail of its height drops below half the noise σ, 5 to 25 FWHM).
   */
  windowFwhm?: number;
  /** Levenberg–Marquardt iterations per group (default 60). */
  maxIterations?: number;
  /** Drop fitted peaks whose height is below this many standard uncertainties, and refit (default: keep all). */
  pruneBelowSigma?: number;
  /** Narrowest acceptable FWHM, degrees (default: one mean step). */
  minFwhmDeg?: number;
  /** Broadest acceptable FWHM, degrees (default 5). */
  maxFwhmDeg?: number;
}

/** How the noise level of each point is judged for the 3σ test. */
export type NoiseModel = 'auto' | 'counts' | 'pattern';

export interface PeakSearchOptions extends PeakFitOptions {
  /** Savitzky–Golay window for the search, odd number of points (default: about 0.05° 2θ, at least 5 points). */
  smoothWindowPoints?: number;
  /** Savitzky–Golay polynomial degree (default 3). */
  smoothPolyOrder?: number;
  /** SNIP largest clipping half-width, degrees 2θ (default 1.0, widened automatically to 10 FWHM of the broad peaks found, at most 30° or a quarter of the pattern). */
  backgroundHalfWidthDeg?: number;
  /** A peak must stand this many σ above the background (default 3). */
  thresholdSigma?: number;
  /**
   * 'counts': σ = √(background counts); 'pattern': the pattern's own sigma; 'auto' (default): counts when every
   * intensity is a whole, non-negative number and the file does not call them cps or normalised, otherwise
   * √(background) times a noise scale measured from the data (for counts per second or scaled intensities).
   */
  noise?: NoiseModel;
}

export interface PeakSearchResult {
  /** Fitted Kα1 peaks, sorted by 2θ. */
  peaks: FittedPeak[];
  /** Background on pattern.x (SNIP, refined by a straight line within each fitted group). */
  background: Float64Array;
  /** Background plus fitted peaks and their Kα2 partners, on pattern.x. */
  model: Float64Array;
  wavelength: Wavelength;
  points: number;
  /** Savitzky–Golay smoothed intensities used for the search. */
  smoothed: Float64Array;
  /** σ of the background at each point, as used for the threshold. */
  noiseSigma: Float64Array;
  /** How that σ was set: counting statistics, a scale measured from the data, or the file's σ (and why). */
  noise: NoiseEstimate;
}

/** How σ of the background was set (see process/peaks.ts). */
export interface NoiseEstimate {
  /** 'counts': σ = √background; 'measured': σ = scale·√background, scale from the data's scatter; 'pattern': the file's σ. */
  model: 'counts' | 'measured' | 'pattern';
  scale: number;
  /** Why the intensities were not taken as counts; null when they were. */
  notCounts: string | null;
  /** A sentence for the user when the intensities were not taken as counts as they are; null otherwise. */
  note: string | null;
}
