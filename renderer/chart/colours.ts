/**
 * The plot's colours, all drawn on white paper (the chart paints its canvas white in light and dark
 * mode alike, so the screen shows what the PNG, SVG and print carry). Every colour a chemist must tell
 * apart on the plot — measured, fit, each phase's marks, unexplained, low-angle, satellite, missing —
 * differs from every other by at least MIN_DELTA_E (CIE 1976 ΔE*ab) and reaches at least
 * MIN_CONTRAST against the paper (WCAG 2.1 contrast ratio, its 3:1 for graphics); test/renderer checks both.
 */

export const PAPER = '#ffffff';
export const MIN_DELTA_E = 20;
export const MIN_CONTRAST = 3;

export const COLORS = {
  ink: '#24313a',
  measured: '#27333b',
  fit: '#00866b',
  background: '#9aa4a6',
  difference: '#8c76ad',
  unexplained: '#b8860b',
  lowAngle: '#c8102e',
  satellite: '#6f7f86',
  missing: '#d6589a',
  grid: '#e4e2dc',
  /** One per phase judged present or uncertain, in the match's order (then again from the first). */
  phases: ['#1f5fbf', '#c05a00', '#a53f96', '#5b8a00', '#7a4b2a', '#5a4fcf'],
  /**
   * Stacked patterns, first to last. No peak marks or fit are drawn over a stack, so it borrows their
   * colours and keeps clear of the phases', which the reference strips beneath it still use.
   */
  overlays: ['#27333b', '#00866b', '#b8860b', '#d6589a', '#6f7f86', '#c8102e'],
};

/** The colours that mark peaks or draw the measured and fitted curves: each must read apart from the others. */
export function markColours(): Record<string, string> {
  const out: Record<string, string> = { measured: COLORS.measured, fit: COLORS.fit, unexplained: COLORS.unexplained, lowAngle: COLORS.lowAngle, satellite: COLORS.satellite, missing: COLORS.missing };
  COLORS.phases.forEach((c, i) => (out[`phase ${i + 1}`] = c));
  return out;
}

function rgb(hex: string): [number, number, number] {
  const m = /^#([0-9a-f]{2})([0-9a-f]{2})([0-9a-f]{2})$/i.exec(hex);
  if (!m) throw new Error(`not a #rrggbb colour: ${hex}`);
  return [m[1]!, m[2]!, m[3]!].map((v) => parseInt(v, 16) / 255) as [number, number, number];
}

/** sRGB component to linear light (IEC 61966-2-1). */
const linear = (c: number): number => (c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4);

/** Relative luminance (WCAG 2.1). */
export function luminance(hex: string): number {
  const [r, g, b] = rgb(hex).map(linear) as [number, number, number];
  return 0.2126 * r + 0.7152 * g + 0.0722 * b;
}

/** WCAG 2.1 contrast ratio, 1–21. */
export function contrastRatio(a: string, b: string): number {
  const [hi, lo] = [luminance(a), luminance(b)].sort((p, q) => q - p) as [number, number];
  return (hi + 0.05) / (lo + 0.05);
}

/** CIE L*a*b* under D65 from sRGB. */
export function lab(hex: string): [number, number, number] {
  const [r, g, b] = rgb(hex).map(linear) as [number, number, number];
  const x = (0.4124 * r + 0.3576 * g + 0.1805 * b) / 0.95047;
  const y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
  const z = (0.0193 * r + 0.1192 * g + 0.9505 * b) / 1.08883;
  const f = (t: number) => (t > 216 / 24389 ? Math.cbrt(t) : ((24389 / 27) * t + 16) / 116);
  return [116 * f(y) - 16, 500 * (f(x) - f(y)), 200 * (f(y) - f(z))];
}

/** CIE 1976 colour difference ΔE*ab. */
export function deltaE(a: string, b: string): number {
  const p = lab(a);
  const q = lab(b);
  return Math.hypot(p[0] - q[0], p[1] - q[1], p[2] - q[2]);
}

/**
 * A sequential colour scale for the heat map, dark (low) to light (high), through blue, teal and
 * green to yellow: lightness rises monotonically so it reads in grey print too. t in 0–1.
 */
const HEAT_STOPS: ReadonlyArray<[number, number, number]> = [
  [0x1b, 0x12, 0x3a],
  [0x2b, 0x3f, 0x8c],
  [0x1f, 0x7a, 0x8c],
  [0x2e, 0xa7, 0x6f],
  [0x9c, 0xcf, 0x3c],
  [0xf6, 0xe6, 0x4b],
];

export function heatColour(t: number): [number, number, number] {
  const u = Math.min(1, Math.max(0, Number.isFinite(t) ? t : 0)) * (HEAT_STOPS.length - 1);
  const i = Math.min(HEAT_STOPS.length - 2, Math.floor(u));
  const f = u - i;
  const a = HEAT_STOPS[i]!;
  const b = HEAT_STOPS[i + 1]!;
  return [0, 1, 2].map((k) => Math.round(a[k]! + (b[k]! - a[k]!) * f)) as [number, number, number];
}
