import {
  compositionBounds,
  type EvaluatedCandidate,
  evaluateTopologies,
  type ScreenedInterpretation,
  screenInterpretations,
} from '../candidates/evaluate.js';
import { interpretPrecursor } from '../candidates/precursor.js';
import { finishGraph, type HypothesisGraph, matchHypothesis } from '../graph/fragment-graph.js';
import type { SpectrumResult } from '../report/result.js';
import { buildAnnotatedResult, unassignedResult } from '../report/build-result.js';
import type { CompiledRuleSet } from '../rules/compile.js';
import { cleanSpectrum } from '../spectrum/clean.js';
import { type Spectrum, spectrumPolarity } from '../spectrum/spectrum.js';
import type { TreeSolution } from '../tree/graph.js';
import { solveTree } from '../tree/solve.js';

/** Interpretations (aglycone + composition) whose topologies are enumerated per spectrum. */
const MAX_INTERPRETATIONS = 6;

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
    const result = scoreUnchecked(spectrum, compiled, options);
    return spectrum.rt === undefined ? result : { ...result, rt: spectrum.rt };
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
  const graphOptions = { fragmentPpm, floorDa, polarity, genericMinRelative: 0.02, genericPerPeak: 2 };
  // Cheap phase first: rule-derived peak readings of every hypothesis, and the best score each could reach.
  const matched = hypotheses
    .map((h) => {
      const m = matchHypothesis(h, clean, compiled, graphOptions);
      const bound = compositionBounds(m.nodes, m.compositions.length, clean, compiled);
      return { m, bound: Math.max(...bound) };
    })
    .sort((a, b) => b.bound - a.bound);
  const best = { score: Number.NEGATIVE_INFINITY };
  const window = 4;
  const evaluateOptions = { precursorPpm, polarity, best, window };
  // Solve the trees of the hypotheses that can still compete, and screen their interpretations.
  const solved: SolvedHypothesis[] = [];
  const screened: ScreenedInterpretation[] = [];
  let bestScreen = Number.NEGATIVE_INFINITY;
  for (const { m, bound } of matched) {
    // The tree adds at most ~0.2 per node to a candidate's score (0.05 × ≤ 4 per edge).
    if (10 * bound + 0.2 * m.nodes.length < bestScreen - window) continue;
    const graph = finishGraph(m, clean, compiled, graphOptions);
    const tree = solveTree(graph.graph);
    const s = { graph, tree, candidates: [] as EvaluatedCandidate[] };
    solved.push(s);
    for (const x of screenInterpretations(m.hypothesis, graph, tree, clean, compiled, evaluateOptions)) {
      screened.push(x);
      if (x.screenScore > bestScreen) bestScreen = x.screenScore;
    }
  }
  // Enumerate topologies for the best few interpretations only: their number grows fast with size.
  screened.sort((a, b) => b.screenScore - a.screenScore);
  let evaluated = 0;
  for (const x of screened) {
    if (evaluated >= MAX_INTERPRETATIONS || x.screenScore < best.score - window) break;
    const s = solved.find((y) => y.graph === x.graph)!;
    s.candidates.push(...evaluateTopologies(x, clean, compiled, evaluateOptions));
    evaluated++;
  }
  return buildAnnotatedResult(spectrum, polarity, clean, solved, compiled);
}

export type { CompiledRuleSet } from '../rules/compile.js';
export { compileRuleSet } from '../rules/compile.js';
