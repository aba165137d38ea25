export type {
  CandidateMatch,
  EvaluatedCandidate,
  EvaluateOptions,
  PeakReadings,
  Reading,
  ScreenedInterpretation,
} from './evaluate.js';
export {
  candidateKey,
  candidateMatches,
  candidateMissing,
  evaluateTopologies,
  screenInterpretations,
} from './evaluate.js';
export type { AglyconeChoice, Interpretation, PrecursorHypothesis, PrecursorOptions } from './precursor.js';
export { fragmentDelta, interpretPrecursor } from './precursor.js';
export type { Stacking, StackingErrorCode } from './stacking.js';
export { parseStacking, StackingError } from './stacking.js';
export type { SearchOptions, Topology, TopologyOptions } from './topology.js';
export { canonical, enumerateTopologies, makeTopology, removedKey, searchTopologies } from './topology.js';
