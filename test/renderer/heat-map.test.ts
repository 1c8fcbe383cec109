import { describe, expect, it } from 'vitest';
import { heatMapValues, niceTicks } from '../../renderer/chart/heat-map.js';

describe('the series heat map', () => {
  it('puts round ticks over a range', () => {
    expect(niceTicks(5, 60, 8)).toEqual([10, 20, 30, 40, 50, 60]);
    expect(niceTicks(0, 4321, 6)).toEqual([0, 1000, 2000, 3000, 4000]);
    expect(niceTicks(0.1, 0.9, 4)).toEqual([0.2, 0.4, 0.6, 0.8]);
  });

  it('puts every sample on one grid over the range all cover, one shared scale', () => {
    const a = { label: 'a', x: Float64Array.from({ length: 101 }, (_, i) => 5 + i * 0.5), y: Float64Array.from({ length: 101 }, () => 10) };
    const b = { label: 'b', x: Float64Array.from({ length: 81 }, (_, i) => 10 + i * 0.5), y: Float64Array.from({ length: 81 }, (_, i) => (i === 20 ? 900 : 40)) };
    const m = heatMapValues([a, b], 40)!;
    expect([m.from, m.to]).toEqual([10, 50]);
    expect(m.values.length).toBe(2);
    // Its peak at 20° 2θ falls in the eleventh 1° column.
    expect(m.values[1]![10]).toBe(900);
    expect([m.min, m.max]).toEqual([10, 900]);
    expect(heatMapValues([a, { ...b, x: Float64Array.from(b.x, (v) => v + 100) }], 40)).toBeNull();
  });
});
