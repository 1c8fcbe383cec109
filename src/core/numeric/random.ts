/**
 * Seeded random numbers for reproducible simulations (tests and the benchmark use fixed seeds).
 */

/** mulberry32: a small 32-bit generator, uniform in [0, 1). */
export function seededUniform(seed: number): () => number {
  let state = seed >>> 0;
  return () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Standard normal deviate by Box–Muller. */
export function normalDeviate(uniform: () => number): number {
  let u = uniform();
  while (u <= 0) u = uniform();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * uniform());
}

/** ln(k!) : exact sum below 20, Stirling series above. */
function logFactorial(k: number): number {
  if (k < 20) {
    let s = 0;
    for (let i = 2; i <= k; i++) s += Math.log(i);
    return s;
  }
  const n = k + 1;
  return (n - 0.5) * Math.log(n) - n + 0.5 * Math.log(2 * Math.PI) + 1 / (12 * n) - 1 / (360 * n ** 3) + 1 / (1260 * n ** 5);
}

/**
 * Poisson deviate. Small means: Knuth's multiplication method. Larger means: transformed rejection
 * with squeeze (PTRS), Hörmann, Insurance: Mathematics and Economics 12, 39 (1993).
 */
export function poissonDeviate(mean: number, uniform: () => number): number {
  if (!(mean > 0)) return 0;
  if (mean < 12) {
    const limit = Math.exp(-mean);
    let k = 0;
    let p = uniform();
    while (p > limit) {
      k++;
      p *= uniform();
    }
    return k;
  }
  const slam = Math.sqrt(mean);
  const logLam = Math.log(mean);
  const b = 0.931 + 2.53 * slam;
  const a = -0.059 + 0.02483 * b;
  const invAlpha = 1.1239 + 1.1328 / (b - 3.4);
  const vr = 0.9277 - 3.6224 / (b - 2);
  for (;;) {
    const u = uniform() - 0.5;
    const v = uniform();
    const us = 0.5 - Math.abs(u);
    const k = Math.floor(((2 * a) / us + b) * u + mean + 0.43);
    if (us >= 0.07 && v <= vr) return k;
    if (k < 0 || (us < 0.013 && v > us)) continue;
    if (Math.log(v) + Math.log(invAlpha) - Math.log(a / (us * us) + b) <= -mean + k * logLam - logFactorial(k)) return k;
  }
}
