import {
  candidateKey,
  compositionBounds,
  type EvaluateOptions,
  type EvaluatedCandidate,
  evaluateTopologies,
  type ScreenedInterpretation,
  screenInterpretations,
  TREE_WEIGHT,
} from '../candidates/evaluate.js';
import { interpretPrecursor } from '../candidates/precursor.js';
import {
  finishGraph,
  type HypothesisGraph,
  type MatchedHypothesis,
  matchHypothesis,
} from '../graph/fragment-graph.js';
import type { SpectrumResult } from '../report/result.js';
import { buildAnnotatedResult, unassignedResult } from '../report/build-result.js';
import type { CompiledRuleSet } from '../rules/compile.js';
import { cleanSpectrum } from '../spectrum/clean.js';
import { type Spectrum, spectrumPolarity } from '../spectrum/spectrum.js';
import { canonical, makeTopology } from '../candidates/topology.js';
import { parseStacking, type Stacking } from '../candidates/stacking.js';
import type { PrecursorHypothesis } from '../candidates/precursor.js';
import { ELECTRON_MASS } from '../chem/elements.js';
import { countsMass, formulaKey, NE } from '../graph/counts.js';
import type { GraphOptions } from '../graph/fragment-graph.js';
import type { CleanSpectrum } from '../spectrum/clean.js';
import type { TreeSolution } from '../tree/graph.js';
import { solveTree } from '../tree/solve.js';

/** Interpretations (aglycone + composition) whose topologies are enumerated per spectrum. */
const MAX_INTERPRETATIONS = 10;

/** What the tree can add to a candidate's score at most (TREE_WEIGHT × at most ~4 per edge). */
function treeAllowance(m: MatchedHypothesis): number {
  return TREE_WEIGHT * 4 * m.nodes.length;
}

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
export function scoreSpectrum(
  spectrum: Spectrum,
  compiled: CompiledRuleSet,
  options: ScoreOptions = {},
): SpectrumResult {
  try {
    const result = scoreUnchecked(uniformShape(spectrum), compiled, options);
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

/**
 * The spectrum with every field present in one order. Readers and callers build spectra with different
 * optional fields, in different orders; one shape keeps the engine's property accesses monomorphic (and spares
 * the optimised code a de-optimisation for each new shape it meets).
 */
function uniformShape(s: Spectrum): Spectrum {
  const p = s.precursor;
  return {
    id: s.id,
    precursor: { mz: p.mz, charge: p.charge, intensity: p.intensity },
    polarity: s.polarity,
    rt: s.rt,
    peaks: s.peaks,
    isotopes: s.isotopes,
    metadata: s.metadata,
  };
}

function scoreUnchecked(
  spectrum: Spectrum,
  compiled: CompiledRuleSet,
  options: ScoreOptions,
): SpectrumResult {
  const rules = compiled.rules;
  const polarity = spectrumPolarity(spectrum);
  const fragmentPpm = options.fragmentPpm ?? rules.tolerances.fragmentPpm;
  const precursorPpm = options.precursorPpm ?? rules.tolerances.precursorPpm;
  const floorDa = rules.tolerances.fragmentFloorDa;
  const clean = cleanSpectrum(spectrum, { ...rules.cleanup, ppm: fragmentPpm, floorDa });
  if (clean.mz.length === 0) {
    return unassignedResult(spectrum, polarity, 'no-peaks', 'no peaks left after clean-up');
  }
  const hypotheses = interpretPrecursor(
    spectrum.precursor.mz,
    spectrum.precursor.charge,
    polarity,
    clean,
    compiled,
    {
      precursorPpm,
      fragmentPpm,
      floorDa,
      unknownY0MinRelative: 0.05,
    },
  );
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
      const bounds = compositionBounds(m.nodes, m.compositions.length, clean, compiled);
      return { m, bounds, bound: Math.max(...bounds) };
    })
    .sort((a, b) => b.bound - a.bound);
  const best = { score: Number.NEGATIVE_INFINITY };
  const window = 4;
  const evaluateOptions: EvaluateOptions = {
    precursorPpm,
    polarity,
    best,
    window,
    runs: new Map(),
    ...(spectrum.isotopes ? { envelope: spectrum.isotopes } : {}),
  };
  // Screen the interpretations of the hypotheses that can still compete (no tree yet).
  const screened: ScreenedInterpretation[] = [];
  let bestScreen = Number.NEGATIVE_INFINITY;
  for (const { m, bounds, bound } of matched) {
    // The tree adds at most ~0.2 per node to a candidate's score (0.05 × ≤ 4 per edge).
    if (10 * bound + treeAllowance(m) < bestScreen - window) continue;
    for (const x of screenInterpretations(m, clean, compiled, evaluateOptions, bounds)) {
      screened.push(x);
      if (x.screenScore > bestScreen) bestScreen = x.screenScore;
    }
  }
  // Solve trees and enumerate topologies for the best few interpretations only.
  screened.sort(
    (a, b) => b.screenScore + treeAllowance(b.matched) - (a.screenScore + treeAllowance(a.matched)),
  );
  const solved: SolvedHypothesis[] = [];
  const solvedOf = new Map<MatchedHypothesis, SolvedHypothesis>();
  let evaluated = 0;
  for (const x of screened) {
    if (evaluated >= MAX_INTERPRETATIONS || x.screenScore + treeAllowance(x.matched) < best.score - window)
      break;
    let s = solvedOf.get(x.matched);
    if (!s) {
      const graph = finishGraph(x.matched, clean, compiled, graphOptions);
      s = { graph, tree: solveTree(graph.graph), candidates: [] };
      solvedOf.set(x.matched, s);
      solved.push(s);
    }
    // With the tree solved its term is known: skip interpretations that cannot reach the window.
    if (x.screenScore + TREE_WEIGHT * s.tree.score < best.score - window) continue;
    s.candidates.push(...evaluateTopologies(x, s.tree, clean, compiled, evaluateOptions));
    evaluated++;
  }
  const userNotes: string[] = [];
  const userKeys = new Map<string, string>();
  for (const u of options.candidates ?? []) {
    const scored = scoreUserCandidate(u, spectrum, clean, compiled, polarity, graphOptions, evaluateOptions);
    if (typeof scored === 'string') userNotes.push(scored);
    else {
      solved.push(scored.solved);
      for (const c of scored.solved.candidates) userKeys.set(candidateKey(c), u.name ?? u.structure);
    }
  }
  return buildAnnotatedResult(spectrum, polarity, clean, solved, compiled, { userKeys, userNotes });
}

/**
 * Scores one user-supplied candidate: reads its stacking string, finds the ion type under which it fits the
 * precursor, builds that hypothesis' tree and scores exactly the stacking given. Returns a caution instead
 * when it cannot be read or fits no ion type.
 */
function scoreUserCandidate(
  u: UserCandidate,
  spectrum: Spectrum,
  clean: CleanSpectrum,
  compiled: CompiledRuleSet,
  polarity: 'positive' | 'negative',
  graphOptions: GraphOptions,
  evaluateOptions: EvaluateOptions,
): { solved: SolvedHypothesis } | string {
  const label = u.name ? `${u.name} (${u.structure})` : u.structure;
  let st: Stacking;
  try {
    st = parseStacking(u.structure, compiled);
  } catch (err) {
    return `User candidate ${label} not scored: ${err instanceof Error ? err.message : String(err)}.`;
  }
  const h = userHypothesis(st, spectrum, clean, compiled, polarity, evaluateOptions.precursorPpm);
  if (!h)
    return `User candidate ${label} fits the precursor m/z ${spectrum.precursor.mz} under no ion type of the rule set.`;
  const matched = matchHypothesis(h, clean, compiled, graphOptions);
  const graph = finishGraph(matched, clean, compiled, graphOptions);
  const tree = solveTree(graph.graph);
  const [screened] = screenInterpretations(matched, clean, compiled, evaluateOptions);
  if (!screened) return `User candidate ${label} not scored.`;
  const topo = makeTopology(
    st.unit,
    st.parent,
    st.linkage,
    canonical(st.unit, st.parent, st.linkage, compiled.units),
    compiled.units.length,
  );
  const candidates = evaluateTopologies(screened, tree, clean, compiled, {
    ...evaluateOptions,
    only: topo,
    best: { score: Number.NEGATIVE_INFINITY },
  });
  return { solved: { graph, tree, candidates } };
}

/** The precursor hypothesis of a user's stacking: the ion type that fits best within tolerance. */
function userHypothesis(
  st: Stacking,
  spectrum: Spectrum,
  clean: CleanSpectrum,
  compiled: CompiledRuleSet,
  polarity: 'positive' | 'negative',
  precursorPpm: number,
): PrecursorHypothesis | undefined {
  const aglCounts = st.aglycone.kind === 'library' ? st.aglycone.group.counts : st.aglycone.counts;
  const cation = st.aglycone.kind === 'library' && st.aglycone.group.cation;
  const observed = [spectrum.precursor.mz];
  if (clean.precursorIndex >= 0) observed.push(clean.mz[clean.precursorIndex]!);
  const z0 = spectrum.precursor.charge;
  let best: PrecursorHypothesis | undefined;
  for (const ion of compiled.ionTypes[polarity]) {
    if (ion.multiplier !== 1 || (ion.name === '[M]+') !== cation) continue;
    if (z0 !== undefined ? Math.abs(ion.charge) !== Math.abs(z0) : Math.abs(ion.charge) !== 1) continue;
    const counts = new Int32Array(NE);
    for (let e = 0; e < NE; e++) counts[e] = aglCounts[e]! + st.composition.counts[e]! + ion.delta.counts[e]!;
    if (counts.some((x) => x < 0)) continue;
    const mz = (countsMass(counts) - ion.charge * ELECTRON_MASS) / Math.abs(ion.charge);
    const ppm = observed
      .map((o) => ((o - mz) / mz) * 1e6)
      .reduce((a, b) => (Math.abs(b) < Math.abs(a) ? b : a));
    if (Math.abs(ppm) > precursorPpm || (best && Math.abs(best.ppm) <= Math.abs(ppm))) continue;
    const index = compiled.compositions.findIndex((c) =>
      c.units.every((n, k) => n === st.composition.units[k]),
    );
    const aglycone =
      st.aglycone.kind === 'library'
        ? { kind: 'library' as const, group: st.aglycone.group }
        : { kind: 'unknown' as const, counts: st.aglycone.counts };
    best = {
      ion,
      counts,
      charge: ion.charge,
      key: formulaKey(counts, ion.charge),
      mz,
      ppm,
      interpretations: [
        {
          ion,
          aglycone,
          composition: index >= 0 ? compiled.compositions[index]! : st.composition,
          compositionIndex: index >= 0 ? index : -1,
        },
      ],
    };
  }
  return best;
}
