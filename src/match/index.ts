export { matchPhases, DEFAULT_TOLERANCE_DEG, POSSIBLE_SCORE, CONFIRMED_SCORE, CONFIRMING_LINES } from './match.js';
export { buildReferenceIndex, screenReferences, type ReferenceIndex } from './reference-index.js';
export { chungWeightFractions } from './quantify.js';
export type * from './types.js';
