export { buildAnnotatedResult, STANDARD_CAUTIONS, unassignedResult } from './build-result.js';
export type {
  CandidateResult,
  MatchedPeak,
  ResultsDocument,
  RuleSetRef,
  SpectrumResult,
  Substituent,
  TreeEdge,
  TreeNode,
} from './result.js';
export {
  CandidateResultSchema,
  DISCLAIMER,
  MatchedPeakSchema,
  ReasonSchema,
  ResultsDocumentSchema,
  RuleSetRefSchema,
  SpectrumResultSchema,
  SubstituentSchema,
  TreeEdgeSchema,
  TreeNodeSchema,
} from './result.js';
