export type { Counts } from './counts.js';
export { countsMass, countsRdbe, countsString, formulaKey } from './counts.js';
export type {
  CationDerivation,
  Core,
  Derivation,
  EdgeReading,
  FragNode,
  GraphOptions,
  HypothesisGraph,
  LossKind,
  MatchedHypothesis,
} from './fragment-graph.js';
export { buildHypothesisGraph, edgePrior, finishGraph, matchHypothesis } from './fragment-graph.js';
