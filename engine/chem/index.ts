// Chemistry core: elements, formulas, ions, tolerances, mass decomposition, plausibility filters, isotopes.
export type {
  DecomposeErrorCode,
  DecomposeOptions,
  Decomposer,
  DecomposerOptions,
  Decomposition,
  DecompositionVisitor,
} from './decompose.js';
export { createDecomposer, DecomposeError, decomposeMass } from './decompose.js';
export type { ElementRanges, ElementRangesErrorCode } from './element-ranges.js';
export {
  DEFAULT_RANGES,
  ElementRangesError,
  elementRangesProblem,
  formatElementRanges,
  MAX_ELEMENT_COUNT,
  parseElementRanges,
  rangesFromFormula,
} from './element-ranges.js';
export type { Element, ElementSymbol, Isotope } from './elements.js';
export {
  ELECTRON_MASS,
  ELEMENT_SYMBOLS,
  ELEMENTS,
  elementIndex,
  isElementSymbol,
  MONO_MASSES,
  PROTON_MASS,
} from './elements.js';
export type {
  ElectronState,
  FilterCode,
  FormulaFilterOptions,
  FormulaPredicate,
  RatioLimits,
  RdbeRule,
} from './filters.js';
export {
  createFormulaFilter,
  electronState,
  formulaProblems,
  isPlausibleFormula,
  KIND_FIEHN_ELEMENT_COUNTS,
  KIND_FIEHN_RATIOS,
  NO_FILTERS,
} from './filters.js';
export type { Formula, FormulaErrorCode } from './formula.js';
export {
  addFormula,
  FormulaError,
  formatFormula,
  formulaEquals,
  formulaMz,
  formulaOf,
  isNonNegative,
  isSubformula,
  monoisotopicMass,
  neutralMass,
  parseFormula,
  rdbe,
  scaleFormula,
  subtractFormula,
} from './formula.js';
export type { IonType, IonTypeErrorCode, Polarity } from './ions.js';
export {
  ION_TYPES,
  IonTypeError,
  ionFormula,
  ionMz,
  ionType,
  mzFromNeutralMass,
  neutralMassFromMz,
  parseIonType,
  resolveIonType,
} from './ions.js';
export type {
  IsotopeCalculator,
  IsotopeErrorCode,
  IsotopeMatch,
  IsotopeMatchOptions,
  IsotopePatternOptions,
  IsotopePeak,
  IsotopePeakMatch,
  ObservedPeaks,
} from './isotopes.js';
export { createIsotopeCalculator, IsotopeError, isotopePattern, scoreIsotopePattern } from './isotopes.js';
export type { Tolerance } from './tolerance.js';
export { ppmError, toleranceDa, toleranceProblem, withinTolerance } from './tolerance.js';
