/**
 * Crystallography for references: cell metric, space groups (Hall symbols → operators → reflection
 * conditions), structure CIFs, X-ray structure factors and powder intensities.
 */
export type { Hkl, UnitCell } from './cell.js';
export { cellMetric, checkCell, dSpacing, equivalentIsotropicU, inverseDSquared, type CellMetric } from './metric.js';
export { formatXyzOperation, parseXyzOperation, type SymOp } from './symop.js';
export { operationsFromHall } from './hall.js';
export { allSpaceGroupSettings, getSpaceGroup, identifySpaceGroup, type CrystalSystem, type SpaceGroup } from './space-groups.js';
export {
  enumerateReflections,
  equivalentReflections,
  generateReflections,
  isSystematicallyAbsent,
  multiplicity,
  representativeHkl,
  type ReflectionList,
} from './reflections.js';
export { readCifStructure, type AtomSite, type CrystalStructure } from './structure.js';
export { dispersionForWavelength, expandToUnitCell, formFactor, powderStructureFactorSquared, structureFactorSquared, type Dispersion } from './structure-factors.js';
export {
  computePowderLines,
  lorentzPolarization,
  mergeCoincidentLines,
  referenceFromCell,
  referenceFromStructure,
  type PowderLine,
  type PowderOptions,
} from './powder.js';
export { ATOMIC_WEIGHTS, ATOMIC_WEIGHT_SOURCE, AVOGADRO_PER_MOL } from './atomic-weights.js';
export {
  cellContents,
  corundumStructure,
  intensityPerUnitWeight,
  referenceIntensityRatio,
  type CellContents,
  type IntensityPerWeight,
  type RirOptions,
} from './rir.js';
