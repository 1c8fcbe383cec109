import { describe, expect, it } from 'vitest';
import { axisScale, niceTicks } from '../../src/core/model/ticks.js';

describe('round tick values', () => {
  it('steps by 1, 2 or 5 times a power of ten and covers the range', () => {
    expect(niceTicks(0, 86, 5)).toEqual([0, 20, 40, 60, 80]);
    expect(niceTicks(5, 60, 8)).toEqual([10, 20, 30, 40, 50, 60]);
    expect(niceTicks(0, 0.00013, 4)).toEqual([0, 0.00005, 0.0001]);
  });

  it('moves a small or large range’s power of ten into the axis title so the labels stay short', () => {
    const y = axisScale(1.3e-4);
    expect(y.note).toBe(' × 10⁻⁶');
    expect(niceTicks(0, 1.3e-4 * y.factor, 4)).toEqual([0, 50, 100]);
    expect(axisScale(0.042)).toEqual({ factor: 1000, note: ' × 10⁻³' });
    expect(axisScale(6000)).toEqual({ factor: 0.001, note: ' × 10³' });
    expect(axisScale(48)).toEqual({ factor: 1, note: '' });
  });
});
