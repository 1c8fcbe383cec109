import { describe, expect, it } from 'vitest';
import { COLORS, contrastRatio, deltaE, heatColour, lab, markColours, MIN_CONTRAST, MIN_DELTA_E, PAPER } from '../../renderer/chart/colours.js';

describe('the plot’s colours', () => {
  it('computes the WCAG contrast ratio and CIE 1976 ΔE as published', () => {
    // WCAG 2.1: black on white is 21:1; CIE L*a*b* of white is (100, 0, 0) under D65.
    expect(contrastRatio('#000000', '#ffffff')).toBeCloseTo(21, 6);
    expect(lab('#ffffff')[0]).toBeCloseTo(100, 3);
    expect(deltaE('#ffffff', '#000000')).toBeCloseTo(100, 3);
  });

  it('tells fit, measured, every phase’s marks and the other marks apart, each readable on the paper', () => {
    const colours = Object.entries(markColours());
    expect(colours.length).toBe(6 + COLORS.phases.length);
    for (const [name, colour] of colours) expect(contrastRatio(colour, PAPER), name).toBeGreaterThanOrEqual(MIN_CONTRAST);
    for (let i = 0; i < colours.length; i++)
      for (let j = i + 1; j < colours.length; j++) expect(deltaE(colours[i]![1], colours[j]![1]), `${colours[i]![0]} vs ${colours[j]![0]}`).toBeGreaterThanOrEqual(MIN_DELTA_E);
  });

  it('keeps the curves (measured, fit, background, difference) apart from each other', () => {
    const curves = [COLORS.measured, COLORS.fit, COLORS.background, COLORS.difference];
    for (let i = 0; i < curves.length; i++) for (let j = i + 1; j < curves.length; j++) expect(deltaE(curves[i]!, curves[j]!)).toBeGreaterThanOrEqual(MIN_DELTA_E);
  });

  it('keeps stacked patterns apart from each other and from the phase colours of the reference strips beneath them', () => {
    const overlays = COLORS.overlays;
    for (let i = 0; i < overlays.length; i++) {
      expect(contrastRatio(overlays[i]!, PAPER)).toBeGreaterThanOrEqual(MIN_CONTRAST);
      for (let j = i + 1; j < overlays.length; j++) expect(deltaE(overlays[i]!, overlays[j]!)).toBeGreaterThanOrEqual(MIN_DELTA_E);
      for (const phase of COLORS.phases) expect(deltaE(overlays[i]!, phase), `${overlays[i]} vs ${phase}`).toBeGreaterThanOrEqual(MIN_DELTA_E);
    }
  });

  it('runs the heat map’s scale from dark to light with lightness always rising', () => {
    let last = -Infinity;
    for (let k = 0; k <= 100; k++) {
      const [r, g, b] = heatColour(k / 100);
      const hex = `#${[r, g, b].map((v) => v.toString(16).padStart(2, '0')).join('')}`;
      const lightness = lab(hex)[0];
      expect(lightness).toBeGreaterThan(last);
      last = lightness;
    }
    expect(heatColour(-1)).toEqual(heatColour(0));
    expect(heatColour(Number.NaN)).toEqual(heatColour(0));
  });
});
