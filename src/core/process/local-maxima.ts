/**
 * Local maxima with a minimum height and a minimum topographic prominence, with the same rules as
 * scipy.signal.find_peaks (a flat top counts once, at its middle; the prominence is the height above
 * the higher of the lowest points reached on each side before meeting a higher point), so results
 * can be compared one to one.
 */
export interface LocalMaximaOptions {
  /** Minimum value at the maximum: one number, or one per point (compared at the maximum's index). */
  minHeight?: number | Float64Array;
  /** Minimum prominence: one number, or one per point. */
  minProminence?: number | Float64Array;
}

export interface LocalMaxima {
  indices: Int32Array;
  prominences: Float64Array;
  leftBases: Int32Array;
  rightBases: Int32Array;
}

function limitAt(limit: number | Float64Array | undefined, i: number): number {
  if (limit === undefined) return Number.NEGATIVE_INFINITY;
  return typeof limit === 'number' ? limit : limit[i];
}

export function findLocalMaxima(y: Float64Array, options: LocalMaximaOptions = {}): LocalMaxima {
  const n = y.length;
  const found: number[] = [];
  const prominences: number[] = [];
  const lefts: number[] = [];
  const rights: number[] = [];
  let i = 1;
  while (i < n - 1) {
    if (y[i - 1] < y[i]) {
      let ahead = i + 1;
      while (ahead < n - 1 && y[ahead] === y[i]) ahead++;
      if (y[ahead] < y[i]) {
        const peak = (i + ahead - 1) >> 1;
        if (y[peak] >= limitAt(options.minHeight, peak)) {
          const top = y[peak];
          const leftBase = leftBaseOf(y, peak);
          const rightBase = rightBaseOf(y, peak);
          const leftMin = y[leftBase];
          const rightMin = y[rightBase];
          const prominence = top - Math.max(leftMin, rightMin);
          if (prominence >= limitAt(options.minProminence, peak)) {
            found.push(peak);
            prominences.push(prominence);
            lefts.push(leftBase);
            rights.push(rightBase);
          }
        }
        i = ahead;
        continue;
      }
    }
    i++;
  }
  return {
    indices: Int32Array.from(found),
    prominences: Float64Array.from(prominences),
    leftBases: Int32Array.from(lefts),
    rightBases: Int32Array.from(rights),
  };
}

// The two walks are functions of their own: the JIT compiles each small loop once, not the whole search per loop.

/** Walking down from the peak while no point is higher: the lowest point reached (the nearest of equals). */
function leftBaseOf(y: Float64Array, peak: number): number {
  const top = y[peak];
  let min = top;
  let base = peak;
  for (let k = peak; k >= 0 && y[k] <= top; k--) {
    if (y[k] < min) {
      min = y[k];
      base = k;
    }
  }
  return base;
}

/** As leftBaseOf, walking up. */
function rightBaseOf(y: Float64Array, peak: number): number {
  const top = y[peak];
  let min = top;
  let base = peak;
  for (let k = peak; k < y.length && y[k] <= top; k++) {
    if (y[k] < min) {
      min = y[k];
      base = k;
    }
  }
  return base;
}
