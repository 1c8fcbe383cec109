import { describe, expect, it } from 'vitest';
import { phaseMarking, satelliteLabel, type PhaseMarkInput } from '../../renderer/chart/phase-marks.js';

const PALETTE = ['#111111', '#222222', '#333333'];

// A target (A) with three peaks, a second phase (B) sharing peak 2 and owning the low-angle peak 0,
// a phase not seen (C), an unexplained peak 5, a Cu Kβ satellite 6 and an unexplained low-angle peak 7.
const input: PhaseMarkInput = {
  phases: [
    { name: 'A', verdict: 'present', lines: [ { peakIndex: 1, twoThetaMeasured: 14.1, hkl: [1, 1, 0] }, { peakIndex: 2, twoThetaMeasured: 28.4, hkl: [2, 2, 0] }, { peakIndex: 3, twoThetaMeasured: 31.9, hkl: [3, 1, 0] }, { peakIndex: 3, twoThetaMeasured: 31.9, hkl: [1, 3, 0] } ] },
    { name: 'B', verdict: 'uncertain', lines: [ { peakIndex: 0, twoThetaMeasured: 8.3 }, { peakIndex: 2, twoThetaMeasured: 28.4 } ] },
    { name: 'C', verdict: 'not-seen', lines: [ { peakIndex: 4, twoThetaMeasured: 40 } ] },
  ],
  unexplained: [
    { peakIndex: 5, twoTheta: 43.2, d: 2.09, lowAngle: false, possibleSources: ['PbI2'] },
    { peakIndex: 6, twoTheta: 25.6, d: 3.48, lowAngle: false, possibleSources: [], satelliteOf: 'Cu Kβ of the peak at 28.400°' },
    { peakIndex: 7, twoTheta: 6.5, d: 13.6, lowAngle: true, possibleSources: [] },
  ],
  lowAnglePeaks: [ { peakIndex: 7, twoTheta: 6.5, phase: null }, { peakIndex: 0, twoTheta: 8.3, phase: 'B' } ],
};

describe('which phase explains which measured peak', () => {
  const { phases, marks } = phaseMarking(input, PALETTE);
  const on = (peakIndex: number) => marks.filter((m) => m.peakIndex === peakIndex).map((m) => `${m.kind}:${m.phase ?? '-'}:${m.stackIndex}`);

  it('gives each present or uncertain phase its own colour, in the match’s order, and counts the peaks it explains', () => {
    expect(phases).toEqual([
      { name: 'A', verdict: 'present', color: '#111111', peakCount: 3 },
      { name: 'B', verdict: 'uncertain', color: '#222222', peakCount: 2 },
    ]);
  });

  it('marks each peak with the phases that explain it, a shared peak with both, stacked', () => {
    expect(on(1)).toEqual(['phase:A:0']);
    expect(on(2)).toEqual(['phase:A:0', 'phase:B:1']);
    // Two lines of A on one peak: one mark.
    expect(on(3)).toEqual(['phase:A:0']);
    // A phase not seen marks nothing.
    expect(on(4)).toEqual([]);
  });

  it('marks unexplained peaks and satellites apart, and keeps the low-angle extra peaks distinct whatever explains them', () => {
    expect(on(5)).toEqual(['unexplained:-:0']);
    expect(on(6)).toEqual(['satellite:-:0']);
    expect(on(7)).toEqual(['low-angle:-:0']);
    // B's low-angle peak: B's mark, and the low-angle mark above it naming B.
    expect(on(0)).toEqual(['phase:B:0', 'low-angle:B:1']);
    expect(marks.find((m) => m.peakIndex === 0 && m.kind === 'low-angle')!.text).toBe('Low-angle extra peak at 8.300°, explained by B');
    expect(marks.find((m) => m.peakIndex === 5)!.text).toBe('Unexplained peak at 43.200° (d 2.090 Å); could be PbI2');
    expect(marks.find((m) => m.peakIndex === 6)!.text).toBe('Possible satellite at 25.600°: Cu Kβ of the peak at 28.400°');
  });

  it('names the satellite line for its label', () => {
    expect(satelliteLabel('Cu Kβ of the peak at 28.441°')).toBe('Cu Kβ');
    expect(satelliteLabel('W Lα of the peak at 28.441°')).toBe('W Lα');
    expect(satelliteLabel('Co Kβ of the peak at 30.000°')).toBe('Co Kβ');
  });

  it('gives the target phase the first colour whatever the match’s order', () => {
    expect(phaseMarking(input, PALETTE, 'b').phases.map((p) => `${p.name} ${p.color}`)).toEqual(['B #111111', 'A #222222']);
    expect(phaseMarking(input, PALETTE, 'not in the match').phases.map((p) => p.name)).toEqual(['A', 'B']);
  });

  it('reuses the palette from its first colour when there are more phases than colours', () => {
    const many = phaseMarking({ phases: ['P', 'Q', 'R', 'S'].map((name) => ({ name, verdict: 'present' as const, lines: [] })), unexplained: [], lowAnglePeaks: [] }, PALETTE);
    expect(many.phases.map((p) => p.color)).toEqual([...PALETTE, PALETTE[0]]);
  });
});
