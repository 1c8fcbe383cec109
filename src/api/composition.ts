/**
 * What a sample is made of, in the words the screens and the report share: each phase seen with its
 * weight % ± σ (absolute, with the amorphous content, where an internal standard was declared:
 * Chung, J. Appl. Cryst. 7, 519 (1974)), else its share of the peak area; and, without a standard,
 * the crystallinity estimate with its caveat.
 */
import { CRYSTALLINITY_CAVEAT } from '../core/analysis/crystallinity.js';
import type { MatchResult, PhaseMatch } from '../core/match/types.js';

/** A fraction (0–1) as a percentage with its σ, both to the σ's first significant digit (at most two decimals). */
export function percentText(fraction: number, sigma: number | null): string {
  if (sigma === null || !(sigma > 0)) return (100 * fraction).toFixed(0);
  const digits = Math.max(0, Math.min(2, 1 - Math.floor(Math.log10(100 * sigma))));
  return `${(100 * fraction).toFixed(digits)} ± ${(100 * sigma).toFixed(digits)}`;
}

/**
 * A phase with its weight % where quantified (absolute with an internal standard), else its share of
 * the peak area. `brief` leaves out what a relative fraction is of (for a headline).
 */
export function phaseShareText(p: PhaseMatch, brief = false): string {
  const uncertain = p.verdict === 'uncertain' ? ' (uncertain)' : '';
  const absolute = p.absoluteWeightFraction ?? null;
  if (absolute !== null) return `${p.name} ${percentText(absolute, p.absoluteWeightFractionSigma ?? null)} wt %${uncertain}`;
  if (p.weightFraction !== null) return `${p.name} ${percentText(p.weightFraction, p.weightFractionSigma ?? null)} wt %${brief ? '' : ' of the crystalline part'}${uncertain}`;
  return `${p.name} ${(100 * p.explainedAreaShare).toFixed(0)} % of peak area${uncertain}`;
}

export interface Composition {
  /** One line per phase seen, then the amorphous content (with a standard) or the crystallinity estimate (without). */
  parts: string[];
  /** What the parts assume: the same sentences for every sample measured alike (a report says each once). */
  notes: string[];
}

export function compositionOf(match: Pick<MatchResult, 'phases' | 'amorphous' | 'quantificationStatement'>, crystallinity: { percent: number } | null): Composition {
  const parts = match.phases.filter((p) => p.verdict !== 'not-seen').map((p) => phaseShareText(p));
  const notes: string[] = [];
  if (match.quantificationStatement) notes.push(`Weight fractions: ${match.quantificationStatement}.`);
  if (match.amorphous) parts.push(`amorphous and unidentified matter ${percentText(match.amorphous.fraction, match.amorphous.sigma)} wt %`);
  else if (crystallinity) {
    parts.push(`crystalline share of the scattering about ${crystallinity.percent.toFixed(0)} % (no standard)`);
    notes.push(`Crystalline share (peak area over all area above the baseline): ${CRYSTALLINITY_CAVEAT}.`);
  }
  return { parts, notes };
}
