import { type EvaluatedCandidate, evaluateCandidates } from '../candidates/evaluate.js';
import { interpretPrecursor } from '../candidates/precursor.js';
import { type HypothesisGraph, buildHypothesisGraph } from '../graph/fragment-graph.js';
import type { SpectrumResult } from '../report/result.js';
import { buildAnnotatedResult, unassignedResult } from '../report/build-result.js';
import type { CompiledRuleSet } from '../rules/compile.js';
import { cleanSpectrum } from '../spectrum/clean.js';
import { type Spectrum, spectrumPolarity } from '../spectrum/spectrum.js';
import type { TreeSolution } from '../tree/graph.js';
import { solveTree } from '../tree/solve.js';

/** A candidate structure a user supplies, in Peel's stacking notation (docs/stacking-notation.md). */
export interface UserCandidate {
  structure: string;
  name?: string;
}

/** Per-call options; anything unset comes from the rule set. */
export interface ScoreOptions {
  /** Fragment tolerance in ppm. @defaultValue the rule set's `tolerances.fragmentPpm` */
  fragmentPpm?: number;
  /** Precursor tolerance in ppm. @defaultValue the rule set's `tolerances.precursorPpm` */
  precursorPpm?: number;
  /** Extra candidates to score beside those enumerated from the rules. */
  candidates?: readonly UserCandidate[];
}

/** One precursor hypothesis after its tree is solved. */
export interface SolvedHypothesis {
  readonly graph: HypothesisGraph;
  readonly tree: TreeSolution;
  readonly candidates: EvaluatedCandidate[];
}

/** Scores one spectrum: its fragmentation tree and ranked candidate structures. Never throws for bad data. */
export function scoreSpectrum(spectrum: Spectrum, compiled: CompiledRuleSet, options: ScoreOptions = {}): SpectrumResult {
  try {
    return scoreUnchecked(spectrum, compiled, options);
  } catch (err) {
    // A fault in the engine must not sink the batch: the spectrum gets an error record.
    return {
      id: spectrum.id,
      status: 'error',
      reason: { code: 'engine-fault', message: err instanceof Error ? err.message : String(err) },
      candidates: [],
      cautions: [],
    };
  }
}

function scoreUnchecked(spectrum: Spectrum, compiled: CompiledRuleSet, options: ScoreOptions): SpectrumResult {
  const rules = compiled.rules;
  const polarity = spectrumPolarity(spectrum);
  const fragmentPpm = options.fragmentPpm ?? rules.tolerances.fragmentPpm;
  const precursorPpm = options.precursorPpm ?? rules.tolerances.precursorPpm;
  const floorDa = rules.tolerances.fragmentFloorDa;
  const clean = cleanSpectrum(spectrum, { ...rules.cleanup, ppm: fragmentPpm, floorDa });
  if (clean.mz.length === 0) {
    return unassignedResult(spectrum, polarity, 'no-peaks', 'no peaks left after clean-up');
  }
  const hypotheses = interpretPrecursor(spectrum.precursor.mz, spectrum.precursor.charge, polarity, clean, compiled, {
    precursorPpm,
    fragmentPpm,
    floorDa,
    unknownY0MinRelative: 0.05,
  });
  if (hypotheses.length === 0) {
    return unassignedResult(
      spectrum,
      polarity,
      'no-precursor-match',
      `no aglycone plus glycan composition of rule set ${rules.name} ${rules.version} fits m/z ${spectrum.precursor.mz}`,
    );
  }
  const solved: SolvedHypothesis[] = [];
  const best = { score: Number.NEGATIVE_INFINITY };
  for (const h of hypotheses) {
    const graph = buildHypothesisGraph(h, clean, compiled, {
      fragmentPpm,
      floorDa,
      polarity,
      genericMinRelative: 0.02,
      genericPerPeak: 2,
    });
    const tree = solveTree(graph.graph);
    const candidates = evaluateCandidates(h, graph, tree, clean, compiled, { precursorPpm, polarity, best });
    solved.push({ graph, tree, candidates });
  }
  return buildAnnotatedResult(spectrum, polarity, clean, solved, compiled);
}

export type { CompiledRuleSet } from '../rules/compile.js';
export { compileRuleSet } from '../rules/compile.js';
