// Peel's scoring engine: pure (no I/O, no clock, no randomness). The pipeline, one folder a stage:
// spectrum (clean-up) → candidates/precursor (interpretation) → graph (fragmentation graph) → tree
// (maximum colorful subtree) → candidates (topologies, evaluation) → score → report.
export type { CompiledRuleSet } from './rules/compile.js';
export { compileRuleSet, RuleCompileError } from './rules/compile.js';
export type { RuleSet } from './rules/schema.js';
export { RuleSetSchema } from './rules/schema.js';
export type { CandidateResult, ResultsDocument, RuleSetRef, SpectrumResult } from './report/result.js';
export { DISCLAIMER, ResultsDocumentSchema, SpectrumResultSchema } from './report/result.js';
export type { ScoreOptions, UserCandidate } from './score/score-spectrum.js';
export { scoreSpectrum } from './score/score-spectrum.js';
export type { Spectrum } from './spectrum/spectrum.js';
export { SpectrumSchema, spectrumPolarity } from './spectrum/spectrum.js';
