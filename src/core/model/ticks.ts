/**
 * Round tick values for the app's and the report's plots, and the power of ten that keeps their
 * labels short. Shared by the report figures and the screens' hand-drawn charts.
 */

/** Round tick values covering [lo, hi]: steps of 1, 2 or 5 × 10ⁿ, about `count` of them. */
export function niceTicks(lo: number, hi: number, count = 6): number[] {
  if (!(hi > lo)) return [lo];
  const raw = (hi - lo) / count;
  const power = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * power).find((s) => s >= raw) ?? 10 * power;
  const out: number[] = [];
  for (let v = Math.ceil(lo / step) * step; v <= hi + step * 1e-9; v += step) out.push(Number(v.toPrecision(12)));
  return out;
}

const SUPERSCRIPT: Record<string, string> = { '-': '⁻', '0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹' };

/**
 * The power of ten that brings `max` into 1–1000 and how the axis title states it, so that the
 * tick labels stay short round numbers ("2", "4") instead of "0.00002".
 */
export function axisScale(max: number): { factor: number; note: string } {
  if (!(max > 0) || (max >= 0.1 && max < 1000)) return { factor: 1, note: '' };
  const power = 3 * Math.floor(Math.log10(max) / 3);
  return { factor: 10 ** -power, note: ` × 10${String(power).replace(/./g, (c) => SUPERSCRIPT[c] ?? c)}` };
}
