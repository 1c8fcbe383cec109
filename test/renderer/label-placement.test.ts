import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { placeLabels, type LabelRequest } from '../../renderer/chart/label-placement.js';

const box = (r: LabelRequest, p: { left: number; top: number }) => ({ left: p.left, top: p.top, right: p.left + r.width, bottom: p.top + r.height });

describe('greedy label placement', () => {
  it('never lets two placed labels overlap, keeps them inside the plot, and places or hides every label once', () => {
    const request = fc.record({
      x: fc.double({ min: 0, max: 800, noNaN: true }),
      y: fc.double({ min: 0, max: 400, noNaN: true }),
      width: fc.integer({ min: 10, max: 60 }),
      height: fc.integer({ min: 8, max: 14 }),
      priority: fc.double({ min: 0, max: 1e4, noNaN: true }),
    });
    fc.assert(
      fc.property(fc.array(request, { maxLength: 80 }), (requests) => {
        const { placed, hidden } = placeLabels(requests, { left: 40, right: 800, top: 20 });
        expect([...placed.map((p) => p.index), ...hidden].sort((a, b) => a - b)).toEqual(requests.map((_, i) => i));
        const boxes = placed.map((p) => box(requests[p.index]!, p));
        for (const b of boxes) {
          expect(b.left).toBeGreaterThanOrEqual(40);
          expect(b.right).toBeLessThanOrEqual(800);
          expect(b.top).toBeGreaterThanOrEqual(20);
        }
        for (let i = 0; i < boxes.length; i++)
          for (let j = i + 1; j < boxes.length; j++) {
            const [a, b] = [boxes[i]!, boxes[j]!];
            expect(a.left < b.right && b.left < a.right && a.top < b.bottom && b.top < a.bottom).toBe(false);
          }
      }),
      { numRuns: 300 },
    );
  });

  it('puts a lone label just above its peak, centred', () => {
    const { placed } = placeLabels([{ x: 200, y: 100, width: 30, height: 12, priority: 1 }], { left: 0, right: 500, top: 0 });
    expect(placed).toEqual([{ index: 0, left: 185, top: 85, stacked: 0 }]);
  });

  it('stacks the weaker of two close peaks above the stronger one, and hides what finds no room', () => {
    const requests = [
      { x: 200, y: 100, width: 30, height: 12, priority: 50 },
      { x: 205, y: 100, width: 30, height: 12, priority: 900 },
      { x: 210, y: 100, width: 30, height: 12, priority: 10 },
    ];
    // Room above the anchors for two levels only (top at 70: levels at 85 and 73).
    const { placed, hidden } = placeLabels(requests, { left: 0, right: 500, top: 70 });
    expect(placed.map((p) => [p.index, p.stacked])).toEqual([
      [1, 0],
      [0, 1],
    ]);
    expect(hidden).toEqual([2]);
  });

  it('lets a label with a higher stacking limit of its own climb further', () => {
    const requests = [
      { x: 200, y: 100, width: 30, height: 12, priority: 2 },
      { x: 200, y: 100, width: 30, height: 12, priority: 1, maxStack: 1 },
      { x: 200, y: 100, width: 30, height: 12, priority: 0, maxStack: 5 },
    ];
    const { placed, hidden } = placeLabels(requests, { left: 0, right: 500, top: 0, maxStack: 0 });
    expect(placed.map((p) => [p.index, p.stacked])).toEqual([
      [0, 0],
      [1, 1],
      [2, 2],
    ]);
    expect(hidden).toEqual([]);
  });

  it('slides a label at the plot edge inside, and keeps clear of obstacles', () => {
    const { placed } = placeLabels([{ x: 495, y: 100, width: 30, height: 12, priority: 1 }], { left: 0, right: 500, top: 0, obstacles: [{ left: 460, top: 88, right: 500, bottom: 96 }] });
    expect(placed).toEqual([{ index: 0, left: 470, top: 73, stacked: 1 }]);
  });
});
