export type { ScoreOptions, SolvedHypothesis, UserCandidate } from './score-spectrum.js';
export { scoreSpectrum } from './score-spectrum.js';
