import { describe, expect, it } from 'vitest';
import { savitzkyGolay, savitzkyGolayWeights } from '../../src/core/process/savitzky-golay.js';
import { InputError } from '../../src/core/errors.js';
import { golden } from './golden.js';

describe('Savitzky–Golay smoothing', () => {
  // Source: scipy.signal.savgol_filter(mode='interp'), scipy version in the golden file (1.10.1).
  it.each(golden.savgol.cases.map((c) => [`${c.window} points, order ${c.order}, derivative ${c.deriv}`, c] as const))(
    'agrees with scipy savgol_filter for %s, edges included',
    (_name, c) => {
      const y = savitzkyGolay(Float64Array.from(golden.savgol.input), { windowPoints: c.window, polyOrder: c.order, derivative: c.deriv, stepSize: c.delta });
      const scale = Math.max(...c.y.map(Math.abs));
      for (let i = 0; i < y.length; i++) expect(Math.abs(y[i] - c.y[i])).toBeLessThan(1e-9 * scale + 1e-9);
    },
  );

  it('reproduces a polynomial of its own degree exactly, at the edges too', () => {
    const y = Float64Array.from({ length: 40 }, (_, i) => 3 - 0.5 * i + 0.02 * i * i - 0.001 * i ** 3);
    const s = savitzkyGolay(y, { windowPoints: 9, polyOrder: 3 });
    for (let i = 0; i < y.length; i++) expect(s[i]).toBeCloseTo(y[i], 9);
  });

  it('has smoothing weights that sum to one', () => {
    const w = savitzkyGolayWeights(11, 4, 5);
    expect(w.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
  });

  it('refuses an even window or an order not below the window', () => {
    const y = new Float64Array(20);
    expect(() => savitzkyGolay(y, { windowPoints: 6 })).toThrow(InputError);
    expect(() => savitzkyGolay(y, { windowPoints: 5, polyOrder: 5 })).toThrow(InputError);
    expect(() => savitzkyGolay(y, { windowPoints: 21 })).toThrow(/longer than the pattern/);
  });
});
