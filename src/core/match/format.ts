/** Numbers as the match reports them. */

export const fmt = (value: number, digits: number): string => value.toFixed(digits);

export const pct = (value: number): string => `${Math.round(100 * value)} %`;

/** With its sign: +0.0123. */
export function signed(value: number, digits = 4): string {
  return `${value >= 0 ? '+' : ''}${value.toFixed(digits)}`;
}


export function round(value: number, digits: number): number {
  const f = 10 ** digits;
  return Math.round(value * f) / f;
}

