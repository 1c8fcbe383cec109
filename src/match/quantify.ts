/**
 * Semi-quantitative weight fractions by matrix flushing: w_i = (I_i / RIR_i) / Σ_j (I_j / RIR_j),
 * summed over the quantified phases (Chung, J. Appl. Cryst. 7, 519 (1974)). I_i is the phase's
 * measured intensity scale (integrated intensity of its 100 % line), RIR_i its reference intensity
 * ratio I/I_corundum. Phases without an RIR get null ("not quantified").
 *
 * The fractions hold when every crystalline phase is identified and there is no amorphous matter;
 * with an unquantified phase present they are fractions among the quantified phases only.
 */
export function chungWeightFractions(phases: ReadonlyArray<{ scale: number; rir: number | null | undefined }>): Array<number | null> {
  let sum = 0;
  for (const p of phases) if (p.rir && p.rir > 0 && p.scale > 0) sum += p.scale / p.rir;
  return phases.map((p) => (p.rir && p.rir > 0 && p.scale > 0 && sum > 0 ? p.scale / p.rir / sum : null));
}
