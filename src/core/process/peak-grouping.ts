/**
 * Which peaks are fitted together: chains of peaks whose cores overlap (Kα1 or Kα2 line within
 * 2·COUPLING_FWHM FWHM of another's), long chains cut at their weakest links, each group with the points it
 * is fitted on and the points where its straight background correction applies.
 */
import { nearestIndex } from '../model/sorted.js';
import { windowOf } from './group-model.js';
import { fwhmOf, HEIGHT, partnerPosition, POS, type PeakFitSetting } from './peak-parameters.js';

/** A group is fitted on this many FWHM either side of its peaks' Kα1 lines and Kα2 partners. */
const CORE_FWHM = 4;
/** …and at least this many points either side (enough for a fair χ² where peaks span few points). */
const MIN_CORE_POINTS = 60;
/**
 * Peaks closer than twice this many FWHM (Kα1 or Kα2 line to Kα1 or Kα2 line) are fitted together;
 * further apart they couple only through their tails, which the other groups' fits hold fixed.
 */
const COUPLING_FWHM = 1.5;
/** Largest group fitted at once; a longer chain of overlapping cores is cut at its weakest links. */
const MAX_GROUP_PEAKS = 6;

export interface PeakGroup {
  /** Indices (into the sorted starting peaks) of the group's peaks. */
  members: number[];
  /** Points [regionStart, regionEnd) the group is fitted on: its peaks' cores (may overlap other groups'). */
  regionStart: number;
  regionEnd: number;
  /** Points [ownStart, ownEnd) where its background correction applies: cut where the next group's begins. */
  ownStart: number;
  ownEnd: number;
  /** The other peaks under the region when it was last fitted (to tell whether a refit is needed). */
  othersAtFit: Float64Array | null;
  /** The group's straight-line background correction from its latest fit: value at `middle` and slope. */
  offset: number;
  slope: number;
  middle: number;
}

/**
 * Chains of peaks (`starts`, sorted by position) closer than 2·COUPLING_FWHM, each chain longer than
 * MAX_GROUP_PEAKS cut at its weakest links (the lowest valley relative to the smaller of the two peaks beside
 * it). Each group is fitted on its peaks' cores (CORE_FWHM, or the given windowFwhm, FWHM either side); its
 * background correction holds up to the valley before the next group.
 */
export function groupOverlappingPeaks(setting: PeakFitSetting, starts: Float64Array[], windowFwhm: number | undefined): PeakGroup[] {
  const { x } = setting;
  const coreFwhm = windowFwhm ?? CORE_FWHM;
  const count = starts.length;
  const pieces: Array<[number, number]> = [];
  let chainStart = 0;
  let chainEnd = Number.NEGATIVE_INFINITY;
  for (let k = 0; k <= count; k++) {
    const fwhm = k < count ? COUPLING_FWHM * fwhmOf(setting, starts[k], 0) : 0;
    if (k === count || starts[k][POS] - fwhm >= chainEnd) {
      if (k > 0) splitChain(setting, starts, chainStart, k, pieces);
      chainStart = k;
      chainEnd = Number.NEGATIVE_INFINITY;
    }
    if (k < count) chainEnd = Math.max(chainEnd, partnerPosition(setting, starts[k][POS]) + fwhm);
  }
  const groups: PeakGroup[] = pieces.map(([a, b]) => {
    let lo = x.length;
    let hi = 0;
    const members: number[] = [];
    for (let k = a; k < b; k++) {
      const [kLo, kHi] = windowOf(setting, starts[k][POS], fwhmOf(setting, starts[k], 0), coreFwhm);
      lo = Math.min(lo, kLo, nearestIndex(x, starts[k][POS]) - MIN_CORE_POINTS);
      hi = Math.max(hi, kHi, nearestIndex(x, partnerPosition(setting, starts[k][POS])) + MIN_CORE_POINTS);
      members.push(k);
    }
    lo = Math.max(lo, 0);
    hi = Math.min(Math.max(hi, lo + 1), x.length);
    return { members, regionStart: lo, regionEnd: hi, ownStart: lo, ownEnd: hi, othersAtFit: null, offset: 0, slope: 0, middle: 0 };
  });
  for (let g = 1; g < groups.length; g++) {
    const left = groups[g - 1];
    const right = groups[g];
    const cut = valleyIndex(setting, starts[left.members[left.members.length - 1]][POS], starts[right.members[0]][POS]);
    left.ownEnd = Math.max(Math.min(left.ownEnd, cut), left.ownStart);
    right.ownStart = Math.min(Math.max(right.ownStart, cut, left.ownEnd), right.ownEnd);
  }
  return groups;
}

/** Cut peaks [a, b) into pieces of at most MAX_GROUP_PEAKS at the weakest links. */
function splitChain(setting: PeakFitSetting, starts: Float64Array[], a: number, b: number, pieces: Array<[number, number]>): void {
  if (b - a <= MAX_GROUP_PEAKS) {
    pieces.push([a, b]);
    return;
  }
  const { y, background } = setting;
  let weakest = a + 1;
  let lowest = Number.POSITIVE_INFINITY;
  for (let k = a + 1; k < b; k++) {
    const i = valleyIndex(setting, starts[k - 1][POS], starts[k][POS]);
    const depth = (y[i] - background[i]) / Math.max(Math.min(starts[k - 1][HEIGHT], starts[k][HEIGHT]), 1e-300);
    if (depth < lowest) {
      lowest = depth;
      weakest = k;
    }
  }
  splitChain(setting, starts, a, weakest, pieces);
  splitChain(setting, starts, weakest, b, pieces);
}

/** Index of the lowest net intensity between two positions. */
function valleyIndex(setting: PeakFitSetting, from: number, to: number): number {
  const { x, y, background } = setting;
  const lo = nearestIndex(x, from);
  const hi = Math.max(nearestIndex(x, to), lo);
  let best = lo;
  for (let i = lo; i <= hi; i++) if (y[i] - background[i] < y[best] - background[best]) best = i;
  return best;
}
