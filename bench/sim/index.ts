// The simulator room: seeded simulated MS2 spectra of glycosylated natural products and decoys, their
// ground truth, file writers and the evaluation used by the quality benchmark. Named exports only.
export type { Formula, IsotopeRatios } from './chem.js';
export { isotopeRatios } from './chem.js';
export type { DecoyDraft, DecoyKind } from './decoys.js';
export { DECOY_KINDS, randomDecoy } from './decoys.js';
export type {
  CandidateVerdict,
  DecoyTally,
  EvaluateOptions,
  Failure,
  QualityMetrics,
  QualityReport,
  Tally,
} from './evaluate.js';
export {
  canonicalBrackets,
  evaluate,
  formatQualityMarkdown,
  judgeCandidate,
  normaliseName,
  topologyMatches,
  truthBrackets,
} from './evaluate.js';
export type { SetProvenance } from './files.js';
export { mgfBlock, toJsonDocument, toMgf, toTruthFile, writeSetFiles } from './files.js';
export type { FragmentOptions, IdealPeak, PeakKind } from './fragments.js';
export { fragmentIon, glycosideFragments, precursorIon, ringIons } from './fragments.js';
export type { SimSetOptions, SimulatedSpectrum, SimulateOptions } from './generate.js';
export {
  describe,
  GENERATOR,
  generateSet,
  iterateSet,
  pickIonType,
  SIMULATED_NOTE,
  simulateDecoy,
  simulateGlycoside,
  simulateOne,
} from './generate.js';
export type { InstrumentOptions, InstrumentRecord, SimPeak } from './instrument.js';
export { acquire } from './instrument.js';
export { Rng, seedOf } from './prng.js';
export { buildDemoSet, DEMO_SCENARIO, glycoside, parseTree } from './scenario.js';
export type {
  AglyconeInstance,
  GlycosideStructure,
  RandomGlycosideOptions,
  Site,
  SugarNode,
} from './structure.js';
export { canonicalTopology, randomGlycoside, structureFormula, unknownAglycone } from './structure.js';
export type { AcylName, AglyconeClass, AglyconeDef, IonTypeName, ResidueName } from './tables.js';
export { ACYLS, AGLYCONES, ION_TYPES, RESIDUES } from './tables.js';
export type { SimTruth, SimTruthFile, TruthSubstituent } from './truth.js';
export { SimTruthFileSchema, SimTruthSchema } from './truth.js';
