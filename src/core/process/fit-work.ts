/**
 * Work done by the profile fits since the last reset, for judging the cost of a change by counting rather
 * than timing: evaluations of a group's model (each with its Jacobian, summed into the normal matrix),
 * Kα1 profile evaluations at points (a doublet counts once), Levenberg–Marquardt steps tried, and group
 * fits whose normal matrix was singular.
 */
export const fitWork = { evaluations: 0, profilePoints: 0, lmSteps: 0, singularFits: 0 };

export function resetFitWork(): void {
  fitWork.evaluations = 0;
  fitWork.profilePoints = 0;
  fitWork.lmSteps = 0;
  fitWork.singularFits = 0;
}
