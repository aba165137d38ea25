import { isotopePattern, scoreIsotopePattern } from '../chem/isotopes.js';
import { type Counts, formulaKey, NE } from '../graph/counts.js';
import type { CationDerivation, Derivation, FragNode, MatchedHypothesis } from '../graph/fragment-graph.js';
import type { CompiledRuleSet } from '../rules/compile.js';
import type { CleanSpectrum } from '../spectrum/clean.js';
import type { TreeSolution } from '../tree/graph.js';
import { fragmentDelta, type Interpretation, type PrecursorHypothesis } from './precursor.js';
import { countsKey, LruCache } from './cache.js';
import { enumerateTopologies, removedKey, searchTopologies, type Topology } from './topology.js';

/** A peak a candidate explains, with the ion it reads it as. */
export interface CandidateMatch {
  readonly node: FragNode;
  readonly label: string;
}

/** One candidate structure with its evidence, before ranking. */
export interface EvaluatedCandidate {
  readonly hypothesis: PrecursorHypothesis;
  readonly interpretation: Interpretation;
  readonly topology: Topology;
  /** Y0 ion (aglycone + fragment charge carrier) atoms and charge. */
  readonly y0: { counts: Counts; charge: number };
  readonly explained: number;
  readonly score: number;
  /** The score without priors: candidates whose evidence is equal are ties, whatever their priors. */
  readonly evidence: number;
  /** Every reading of every peak under this candidate's composition (shared by its topologies). */
  readonly readings: readonly PeakReadings[];
  /** Per entry of `readings`, the index of the reading this topology takes (-1: peak not explained). */
  readonly chosen: Int16Array;
  /** Whether the aglycone is evidenced: Y0 (or its radical / water loss) or C-glycoside cross-ring ions. */
  readonly keyIonSeen: boolean;
  readonly treeScore: number;
}

/** One way to read a peak under a composition. */
export interface Reading {
  readonly node: FragNode;
  /** The rule derivation (Y-type readings) or oxonium / acylium explanation (kind 3); the other is undefined. */
  readonly deriv: Derivation | undefined;
  readonly cation: CationDerivation | undefined;
  /** Y-loss key (Y ions, cross-ring ions) or unit key (oxonium / acylium ions). */
  readonly key: number;
  /** 0 a Y ion itself, 1 a Y ion after small losses, 2 a cross-ring ion, 3 an oxonium or acylium ion. */
  readonly kind: 0 | 1 | 2 | 3;
  /** Cross-ring ions: the residue (unit index) of each cleavage; they must be C-linked in the topology. */
  readonly cleaved: readonly number[] | undefined;
  readonly weight: number;
}

/** The readings of one peak, best weight first. */
export interface PeakReadings {
  readonly peak: number;
  readonly intensity: number;
  readonly list: readonly Reading[];
}

/** The topologies one interpretation's search kept, to be reused by interpretations with the same readings. */
export interface TopologyRun {
  readonly comp: number;
  readonly fixed: number;
  readonly prior: number;
  readonly candidates: EvaluatedCandidate[];
}

/** Weights and limits for {@link evaluateCandidates}. */
export interface EvaluateOptions {
  precursorPpm: number;
  polarity: 'positive' | 'negative';
  /**
   * Best score seen so far (shared across hypotheses, updated here): compositions whose best possible score
   * falls more than `window` below it are not evaluated.
   */
  best: { score: number };
  /** @defaultValue 4 */
  window?: number;
  /** Compositions of one hypothesis whose topologies are enumerated (best bounds first). @defaultValue 3 */
  maxCompositions?: number;
  /** Topologies enumerated per composition. @defaultValue 400 */
  maxTopologies?: number;
  /** Compositions of at most this many units are enumerated in full; larger ones by local search. @defaultValue 4 */
  enumerateUpTo?: number;
  /** Score this one topology only (a user-supplied candidate). */
  only?: Topology;
  /**
   * Topology searches already run in this spectrum, by the readings they scored (readings are shared by the
   * interpretations of one hypothesis that read the peaks alike): a later one reuses the ranking.
   */
  runs?: Map<readonly PeakReadings[], TopologyRun>;
  /** The precursor's MS1 isotope envelope (`[m/z, intensity]`, monoisotopic first), when the input gave it. */
  envelope?: readonly (readonly [number, number])[];
}

/**
 * Upper bound of each composition's weighted explained intensity: the precursor plus every peak it can
 * read, at the best weight any reading gives (full for an ion itself, less after small losses).
 */
export function compositionBounds(
  nodes: readonly FragNode[],
  compositionCount: number,
  spectrum: CleanSpectrum,
  rules: CompiledRuleSet,
): Float64Array {
  const precursorShare = spectrum.precursorIndex >= 0 ? spectrum.intensity[spectrum.precursorIndex]! : 0;
  const bound = new Float64Array(compositionCount).fill(precursorShare);
  // Best reading weight per peak and composition, flat: wts[peak * compositionCount + ci] (a scratch buffer
  // reused from call to call: large typed arrays are allocated outside the JS heap, slowly).
  const nPeaks = spectrum.mz.length;
  const size = nPeaks * compositionCount;
  if (weightScratch.length < size) weightScratch = new Float64Array(Math.max(size, 2 * weightScratch.length));
  const wts = weightScratch;
  wts.fill(0, 0, size);
  for (let v = 1; v < nodes.length; v++) {
    const n = nodes[v]!;
    const at = n.peak * compositionCount;
    for (const d of n.derivs) {
      const combo = rules.lossCombos[d.combo]!;
      const wgt = combo.crossRing >= 0 ? 1 : 0.7 ** combo.size;
      if (wgt > wts[at + d.comp]!) wts[at + d.comp] = wgt;
    }
    for (const c of n.cations) if (wts[at + c.comp]! < 0.8) wts[at + c.comp] = 0.8;
  }
  for (let p = 0; p < nPeaks; p++) {
    const at = p * compositionCount;
    for (let ci = 0; ci < compositionCount; ci++) {
      const x = wts[at + ci]!;
      if (x > 0) bound[ci]! += x * spectrum.intensity[p]!;
    }
  }
  return bound;
}

let weightScratch = new Float64Array(1024);

/** Enumerated topologies per composition (they depend on the rule set only). */
const topologyCache = new WeakMap<CompiledRuleSet, LruCache<number | string, Topology[]>>();

/** Topologies enumerated per composition unless the options say otherwise. */
const DEFAULT_MAX_TOPOLOGIES = 400;

/**
 * Compositions whose enumerated topologies are kept (a list holds up to `maxTopologies` of ~0.4 KB each). The
 * V8 heap grows to a few times its live size, so this bound is also what keeps `peel score` under 300 MB.
 */
const TOPOLOGY_CACHE_SIZE = 800;

function topologiesFor(
  rules: CompiledRuleSet,
  units: Uint8Array,
  maxCLinked: number,
  limit: number,
): Topology[] {
  let cache = topologyCache.get(rules);
  if (!cache) {
    cache = new LruCache(TOPOLOGY_CACHE_SIZE);
    topologyCache.set(rules, cache);
  }
  const k = countsKey(units);
  // A number for the usual calls (C-link count < 4, the default limit), text otherwise.
  const key =
    typeof k === 'number' && maxCLinked < 4 && limit === DEFAULT_MAX_TOPOLOGIES
      ? k * 4 + maxCLinked
      : `${k}|${maxCLinked}|${limit}`;
  return cache.getOrSet(key, () => enumerateTopologies(units, rules.units, { maxCLinked, limit }));
}

/** Weight of the fragmentation tree's score in a candidate's score. */
export const TREE_WEIGHT = 0.05;

/** One interpretation of a solved hypothesis, screened before its topologies are enumerated. */
export interface ScreenedInterpretation {
  readonly hypothesis: PrecursorHypothesis;
  /** The hypothesis' rule-derived peak readings (its tree is solved only if the interpretation is evaluated). */
  readonly matched: MatchedHypothesis;
  readonly interpretation: Interpretation;
  /** Index of the composition in `graph.compositions`. */
  readonly comp: number;
  readonly readings: PeakReadings[];
  readonly y0: { counts: Counts; charge: number };
  /** Score terms that depend neither on the topology nor on the tree (priors included). */
  readonly fixed: number;
  /** The prior part of `fixed` (unit frequencies, ion type). */
  readonly prior: number;
  /** Upper bound of any topology's score before the tree term, sharpened by whether Y0 or cross-ring ions are seen. */
  readonly screenScore: number;
}

/**
 * Screens the interpretations of one solved hypothesis: the peak readings of each composition, the score
 * terms that do not depend on the topology, and a bound on the best topology's score.
 */
export function screenInterpretations(
  hg: MatchedHypothesis,
  spectrum: CleanSpectrum,
  rules: CompiledRuleSet,
  options: EvaluateOptions,
  /** {@link compositionBounds} of `hg`, when the caller has them already. */
  bounds?: Float64Array,
): ScreenedInterpretation[] {
  const w = rules.rules.scoring;
  const h = hg.hypothesis;
  const byPeak = new Map<number, FragNode[]>();
  for (let v = 1; v < hg.nodes.length; v++) {
    const n = hg.nodes[v]!;
    const list = byPeak.get(n.peak);
    if (list) list.push(n);
    else byPeak.set(n.peak, [n]);
  }
  const bound = bounds ?? compositionBounds(hg.nodes, hg.compositions.length, spectrum, rules);
  const readingsOf = new Map<number, PeakReadings[]>();
  // MS1 isotope envelope against the precursor formula: 4 × (similarity − 0.75), so a close fit (≥ 0.95)
  // adds ~0.8 and a poor one (0.5) costs 1; a sulphur or chlorine formula shows in its M+2 peak.
  let envelopeTerm = 0;
  if (options.envelope && options.envelope.length >= 2) {
    const predicted = isotopePattern({ counts: Array.from(h.counts), charge: h.charge });
    const fit = scoreIsotopePattern(options.envelope, predicted, {
      tolerance: { ppm: options.precursorPpm * 2, floorDa: 0.002 },
    });
    envelopeTerm = w.isotopeEnvelope * 4 * (fit.similarity - 0.75);
  }
  const out: ScreenedInterpretation[] = [];
  for (const interp of h.interpretations) {
    const ci = hg.compositions.indexOf(interp.composition.units);
    if (ci < 0) continue;
    const compUnits = hg.compositions[ci]!;
    const aglCounts =
      interp.aglycone.kind === 'library' ? interp.aglycone.group.counts : interp.aglycone.counts;
    const cation = interp.aglycone.kind === 'library' && interp.aglycone.group.cation;
    const frag = fragmentDelta(interp.ion, rules);
    const y0Counts = new Int32Array(NE);
    for (let e = 0; e < NE; e++) y0Counts[e] = aglCounts[e]! + (cation ? 0 : frag.counts[e]!);
    const y0 = { counts: y0Counts, charge: cation ? 1 : frag.charge };
    // Fragments of an adduct ion descend from the precursor or from its core after the adduct loss.
    const cores = hg.cores.map((k) => k.ions === undefined || k.ions.has(interp.ion.name));
    // Composition and cores in one number: a core bit per core (a hypothesis has a handful of cores).
    let readingsKey = ci;
    for (let k = 0; k < cores.length; k++) readingsKey = readingsKey * 2 + (cores[k] ? 1 : 0);
    let readings = readingsOf.get(readingsKey);
    if (!readings) {
      readings = peakReadings(byPeak, ci, cores, spectrum, rules);
      readingsOf.set(readingsKey, readings);
    }
    const nUnits = compUnits.reduce((a, x) => a + x, 0);
    const ppmTerm = (h.ppm / options.precursorPpm) ** 2 * 0.5;
    const unknown =
      interp.aglycone.kind === 'unknown'
        ? w.unknownAglycone + w.unknownHeteroatom * (aglCounts[2]! + aglCounts[4]! + aglCounts[5]!)
        : 0;
    // Priors: how common the units and the ion type are; they order readings the evidence cannot separate.
    let prior = -(rules.rules.ionTypes.penalties[interp.ion.name] ?? 0);
    for (let u = 0; u < compUnits.length; u++) prior += compUnits[u]! * rules.unitPriors[u]!;
    const fixed = -ppmTerm - unknown - 0.1 * nUnits + prior + envelopeTerm;
    // Bare Y0 (every unit lost) or a cross-ring ion: without either, every topology pays the Y0 penalty.
    const allKey = removedKey(compUnits);
    let y0Seen = false;
    let crossSeen = false;
    // Distinct intermediate Y-loss keys and cross-ring cleavages read (a handful each: lists, not sets).
    const yKeys: number[] = [];
    const crossCleavages: number[] = [];
    for (const r of readings)
      for (const x of r.list) {
        if (x.kind === 0 && x.key === allKey) y0Seen = true;
        if (x.kind === 2) {
          crossSeen = true;
          const combo = rules.lossCombos[x.deriv!.combo]!;
          if (!crossCleavages.includes(combo.crossRing)) crossCleavages.push(combo.crossRing);
          if (combo.crossRing2 >= 0 && !crossCleavages.includes(combo.crossRing2))
            crossCleavages.push(combo.crossRing2);
        }
        if (x.kind === 0 && x.key !== 0 && x.key !== allKey && !yKeys.includes(x.key)) yKeys.push(x.key);
      }
    // Every topology predicts at least one Y ion per retained-unit count (a linear extension's prefixes): with
    // n units of which c are C-linked (fixed), n − c − 1 intermediate Y ions, each missing one costed.
    const missingYCost = (c: number) => 0.25 * w.missingIon * Math.max(0, nUnits - c - 1 - yKeys.length);
    // O-linked topologies pay for a missing bare Y0 (every unit lost).
    let screenScore = 10 * bound[ci]! + fixed - (y0Seen ? 0 : 2 * w.missingIon) - missingYCost(0);
    if (crossSeen) {
      // C-linked topologies (enumerated only when cross-ring ions are read, as in evaluateTopologies): the
      // C-linkage prior, and the diagnostic cross-ring ions missing for the least-penalised C-linkable residue.
      let cLinkable = 0;
      let diagnosticCost = Number.POSITIVE_INFINITY;
      for (let u = 0; u < compUnits.length; u++) {
        const k = compUnits[u]!;
        if (k === 0 || rules.cLinkable[u] !== 1) continue;
        cLinkable += k;
        let cost = 0;
        for (const x of rules.diagnosticCrossRing.get(u) ?? [])
          if (!crossCleavages.includes(x)) cost += 0.5 * w.missingIon;
        diagnosticCost = Math.min(diagnosticCost, cost);
      }
      if (cLinkable > 0) {
        const cBound =
          10 * bound[ci]! + fixed - w.cLinkage - diagnosticCost - missingYCost(Math.min(2, cLinkable));
        screenScore = Math.max(screenScore, cBound);
      }
    }
    out.push({
      hypothesis: h,
      matched: hg,
      interpretation: interp,
      comp: ci,
      readings,
      y0,
      fixed,
      prior,
      screenScore,
    });
  }
  return out;
}

const cleavedCache = new WeakMap<CompiledRuleSet, (readonly number[] | undefined)[]>();

/** Per loss combination, the residue (unit index) of each cross-ring cleavage it makes; undefined for none. */
function cleavedResidues(rules: CompiledRuleSet): (readonly number[] | undefined)[] {
  let list = cleavedCache.get(rules);
  if (!list) {
    list = rules.lossCombos.map((combo) =>
      combo.crossRing < 0
        ? undefined
        : [combo.crossRing, combo.crossRing2].filter((x) => x >= 0).map((x) => rules.crossRingResidue[x]!),
    );
    cleavedCache.set(rules, list);
  }
  return list;
}

function peakReadings(
  byPeak: Map<number, FragNode[]>,
  ci: number,
  cores: readonly boolean[],
  spectrum: CleanSpectrum,
  rules: CompiledRuleSet,
): PeakReadings[] {
  const readings: PeakReadings[] = [];
  const cleavedOf = cleavedResidues(rules);
  for (const [peak, nodes] of byPeak) {
    const list: Reading[] = [];
    for (const n of nodes) {
      for (const d of n.derivs) {
        if (d.comp !== ci || !cores[d.core]) continue;
        const combo = rules.lossCombos[d.combo]!;
        const kind = combo.crossRing >= 0 ? 2 : combo.size === 0 ? 0 : 1;
        list.push({
          node: n,
          deriv: d,
          cation: undefined,
          key: removedKey(d.removed),
          kind,
          cleaved: kind === 2 ? cleavedOf[d.combo] : undefined,
          weight: kind === 2 ? 1 : 0.7 ** combo.size,
        });
      }
      for (const c of n.cations) {
        if (c.comp === ci)
          list.push({
            node: n,
            deriv: undefined,
            cation: c,
            key: removedKey(c.units),
            kind: 3,
            cleaved: undefined,
            weight: 0.8,
          });
      }
    }
    if (list.length) {
      // Best weight first, then by kind; stable (insertion sort: a peak has a few readings).
      for (let a = 1; a < list.length; a++) {
        const x = list[a]!;
        let b = a - 1;
        while (
          b >= 0 &&
          (list[b]!.weight < x.weight || (list[b]!.weight === x.weight && list[b]!.kind > x.kind))
        ) {
          list[b + 1] = list[b]!;
          b--;
        }
        list[b + 1] = x;
      }
      readings.push({ peak, intensity: spectrum.intensity[peak]!, list });
    }
  }
  return readings;
}

/**
 * Scores every topology of one screened interpretation. A candidate explains a peak when one of the peak's
 * formula explanations is an ion it predicts (its Y-ion ladder, with small losses, radical Y ions in negative
 * mode, cross-ring ions of C-linked residues, oxonium and acylium ions); it is penalised for strong ions it
 * predicts but misses. Keeps the best few within `window` of the best score seen.
 */
export function evaluateTopologies(
  s: ScreenedInterpretation,
  tree: TreeSolution,
  spectrum: CleanSpectrum,
  rules: CompiledRuleSet,
  options: EvaluateOptions,
): EvaluatedCandidate[] {
  const w = rules.rules.scoring;
  const window = options.window ?? 4;
  const { hypothesis: h, interpretation: interp, readings, y0 } = s;
  const fixed = s.fixed + TREE_WEIGHT * tree.score;
  const hg = s.matched;
  const compUnits = hg.compositions[s.comp]!;
  const precursorShare = spectrum.precursorIndex >= 0 ? spectrum.intensity[spectrum.precursorIndex]! : 0;
  let crossSeen = false;
  for (let r = 0; r < readings.length && !crossSeen; r++)
    for (const x of readings[r]!.list) if (x.kind === 2) crossSeen = true;
  // Interpretations that share a composition and its readings (same-formula aglycone groups, ion types)
  // rank the topologies identically: reuse the first search, shifted by the difference in fixed terms.
  const shared = options.only ? undefined : options.runs?.get(readings);
  if (shared && shared.comp === s.comp) {
    const shift = fixed - shared.fixed;
    const priorShift = s.prior - shared.prior;
    return keepBest(
      shared.candidates.map((c) => ({
        ...c,
        hypothesis: h,
        interpretation: interp,
        y0,
        score: c.score + shift,
        evidence: c.evidence + shift - priorShift,
      })),
      options.best.score - window,
    );
  }
  const chosen = new Int16Array(readings.length);
  // The best KEEP topologies so far, best first; entries are recycled as better ones push them out.
  const perComposition: Kept[] = [];
  // Cross-ring cleavages seen by the current topology: seenCross[x] === stamp (no set to clear per call).
  const seenCross = new Int32Array(rules.crossRingResidue.length);
  // The distinct keys the readings ask about, so each topology is probed once per key, not per reading:
  // Y-loss keys (kinds 0–2) and unit keys of oxonium / acylium ions (kind 3), indexed per reading entry.
  const yKeys: number[] = [];
  const bKeys: number[] = [];
  const yIndex = new Map<number, number>();
  const bIndex = new Map<number, number>();
  const entryStart = new Int32Array(readings.length + 1);
  let entries = 0;
  for (let r = 0; r < readings.length; r++) {
    entryStart[r] = entries;
    entries += readings[r]!.list.length;
  }
  entryStart[readings.length] = entries;
  const entryKey = new Int32Array(entries);
  for (let r = 0; r < readings.length; r++) {
    const list = readings[r]!.list;
    for (let k = 0; k < list.length; k++) {
      const x = list[k]!;
      const keys = x.kind === 3 ? bKeys : yKeys;
      const index = x.kind === 3 ? bIndex : yIndex;
      let i = index.get(x.key);
      if (i === undefined) {
        i = keys.length;
        keys.push(x.key);
        index.set(x.key, i);
      }
      entryKey[entryStart[r]! + k] = i;
    }
  }
  const yAdmitted = new Uint8Array(yKeys.length);
  const bAdmitted = new Uint8Array(bKeys.length);
  // Y-loss keys read as Y ions (kind 0) by this topology: a stamp per key marks it seen in this call.
  const seenStamp = new Int32Array(yKeys.length);
  let stamp = 0;

  const scoreTopology = (topo: Topology, keep?: () => Topology): number => {
    let explained = precursorShare;
    // Intensity read as an ion itself counts fully, read as that ion after small losses a little less.
    let weighted = precursorShare;
    let crossIntensity = 0;
    let y0Seen = false;
    // Distinct Y ions seen other than the precursor (key 0) and Y0.
    let seenY = 0;
    stamp++;
    for (let i = 0; i < yKeys.length; i++) yAdmitted[i] = topo.yLosses.has(yKeys[i]!) ? 1 : 0;
    for (let i = 0; i < bKeys.length; i++) bAdmitted[i] = topo.bUnits.has(bKeys[i]!) ? 1 : 0;
    for (let r = 0; r < readings.length; r++) {
      const { list, intensity } = readings[r]!;
      const at = entryStart[r]!;
      chosen[r] = -1;
      for (let k = 0; k < list.length; k++) {
        const x = list[k]!;
        const ki = entryKey[at + k]!;
        const ok =
          x.kind === 3
            ? bAdmitted[ki] === 1
            : yAdmitted[ki] === 1 && (x.kind !== 2 || cleavable(topo, x.cleaved!));
        if (!ok) continue;
        chosen[r] = k;
        explained += intensity;
        weighted += intensity * x.weight;
        if (x.kind === 0) {
          if (x.key === topo.y0Loss) y0Seen = true;
          else if (x.key !== 0 && seenStamp[ki] !== stamp) {
            seenStamp[ki] = stamp;
            seenY++;
          }
        } else if (x.kind === 2) {
          crossIntensity += intensity;
          const combo = rules.lossCombos[x.deriv!.combo]!;
          seenCross[combo.crossRing] = stamp;
          if (combo.crossRing2 >= 0) seenCross[combo.crossRing2] = stamp;
        }
        break;
      }
    }
    // Strong ions the topology predicts but the spectrum lacks.
    let penalty = 0;
    // Y0 (the aglycone with its C-linked residues) is expected whenever something can be lost to reach it.
    if (topo.y0Loss !== 0 && !y0Seen) penalty += 2 * w.missingIon;
    if (topo.cLinked) {
      if (crossIntensity === 0) penalty += 2 * w.missingIon;
      for (let i = 0; i < topo.unit.length; i++) {
        if (topo.linkage[i] !== 'C') continue;
        const diagnostic = rules.diagnosticCrossRing.get(topo.unit[i]!);
        if (diagnostic) for (const x of diagnostic) if (seenCross[x] !== stamp) penalty += 0.5 * w.missingIon;
      }
    }
    // Every topology predicts the precursor (key 0) and Y0; the other Y ions it predicts are missing unless seen.
    const missingY = topo.yLosses.size - 1 - (topo.y0Loss !== 0 ? 1 : 0) - seenY;
    penalty += 0.25 * w.missingIon * missingY;
    const keyIonSeen = topo.cLinked ? crossIntensity > 0 || y0Seen : y0Seen;
    let topoPrior = 0;
    for (let i = 0; i < topo.unit.length; i++) {
      if (topo.linkage[i] === 'C') topoPrior -= w.cLinkage;
      if (topo.linkage[i] === 'ester' && topo.parent[i] === -1) topoPrior -= w.acylOnAglycone;
    }
    const score = 10 * weighted - penalty + fixed + topoPrior;
    // Only the best KEEP topologies are kept (allocated); most visited ones never are.
    const full = perComposition.length >= KEEP;
    if (score >= options.best.score - window && (!full || score > perComposition[KEEP - 1]!.score)) {
      if (score > options.best.score) options.best.score = score;
      const entry = full ? perComposition.pop()! : newKept(readings.length);
      entry.score = score;
      entry.topology = keep ? keep() : topo;
      entry.explained = Math.min(1, explained);
      entry.evidence = score - s.prior - topoPrior;
      entry.keyIonSeen = keyIonSeen;
      entry.chosen.set(chosen);
      insertSorted(perComposition, entry);
    }
    return score;
  };

  const maxC = crossSeen ? 2 : 0;
  const instances = compUnits.reduce((a, x) => a + x, 0);
  if (options.only) {
    scoreTopology(options.only);
  } else if (instances <= (options.enumerateUpTo ?? 4)) {
    for (const topo of topologiesFor(rules, compUnits, maxC, options.maxTopologies ?? DEFAULT_MAX_TOPOLOGIES))
      scoreTopology(topo);
  } else {
    searchTopologies(compUnits, rules.units, scoreTopology, { maxCLinked: maxC });
  }
  const candidates = perComposition.map(
    (e): EvaluatedCandidate => ({
      hypothesis: h,
      interpretation: interp,
      topology: e.topology!,
      y0,
      explained: e.explained,
      score: e.score,
      evidence: e.evidence,
      readings,
      chosen: e.chosen,
      keyIonSeen: e.keyIonSeen,
      treeScore: tree.score,
    }),
  );
  if (!options.only) options.runs?.set(readings, { comp: s.comp, fixed, prior: s.prior, candidates });
  return keepBest(candidates, options.best.score - window);
}

/** Whether a topology has C-linked residues for every cleavage of a cross-ring reading. */
function cleavable(topo: Topology, cleaved: readonly number[]): boolean {
  if (!topo.cLinked) return false;
  if (cleaved.length === 1) return topo.cCounts[cleaved[0]!]! >= 1;
  const a = cleaved[0]!;
  const b = cleaved[1]!;
  return a === b ? topo.cCounts[a]! >= 2 : topo.cCounts[a]! >= 1 && topo.cCounts[b]! >= 1;
}

/** Topologies kept per interpretation. */
const KEEP = 12;

/** A topology kept while an interpretation's topologies are scored. */
interface Kept {
  score: number;
  topology: Topology | undefined;
  explained: number;
  evidence: number;
  keyIonSeen: boolean;
  /** Reading chosen per peak (see {@link EvaluatedCandidate.chosen}). */
  readonly chosen: Int16Array;
}

function newKept(readings: number): Kept {
  return {
    score: 0,
    topology: undefined,
    explained: 0,
    evidence: 0,
    keyIonSeen: false,
    chosen: new Int16Array(readings),
  };
}

/** Inserts an entry into a list kept sorted by descending score. */
function insertSorted(list: Kept[], c: Kept): void {
  let i = list.length;
  list.push(c);
  while (i > 0 && list[i - 1]!.score < c.score) {
    list[i] = list[i - 1]!;
    i--;
  }
  list[i] = c;
}

/** The best few stackings at or above a score. */
function keepBest(list: EvaluatedCandidate[], floor: number): EvaluatedCandidate[] {
  // The list holds distinct stackings already (an enumeration lists each once, a search scores each shape
  // once), so none is dropped as a repeat: their notations are written only for the candidates reported.
  const sorted = [...list].sort((a, b) => b.score - a.score);
  const out: EvaluatedCandidate[] = [];
  for (const c of sorted) {
    if (out.length >= KEEP || c.score < floor) break;
    out.push(c);
  }
  return out;
}

/** The peaks a candidate explains, with Domon–Costello style labels (built for reported candidates only). */
export function candidateMatches(c: EvaluatedCandidate, rules: CompiledRuleSet): CandidateMatch[] {
  const comp = c.interpretation.composition.units;
  const out: CandidateMatch[] = [];
  c.readings.forEach((r, i) => {
    const k = c.chosen[i]!;
    if (k < 0) return;
    const x = r.list[k]!;
    const label = x.deriv
      ? yLabel(x.deriv, comp, rules, x.key === c.topology.y0Loss && !c.topology.cLinked)
      : bLabel(x.cation!, rules);
    out.push({ node: x.node, label });
  });
  return out;
}

/** Ions a candidate predicts but the spectrum lacks: 'Y0', 'X' (cross-ring ions) or Y-loss keys. */
export function candidateMissing(c: EvaluatedCandidate): (number | 'Y0' | 'X')[] {
  // Y-loss keys the candidate reads as Y ions (a handful: a list, not a set).
  const seen: number[] = [];
  let cross = false;
  for (let i = 0; i < c.readings.length; i++) {
    const k = c.chosen[i]!;
    if (k < 0) continue;
    const x = c.readings[i]!.list[k]!;
    if (x.kind === 0) seen.push(x.key);
    else if (x.kind === 2) cross = true;
  }
  const out: (number | 'Y0' | 'X')[] = [];
  const t = c.topology;
  if (!t.cLinked && !seen.includes(t.y0Loss)) out.push('Y0');
  if (t.cLinked && !cross) out.push('X');
  const keys = t.yLosses;
  for (let i = 0; i < keys.size; i++) {
    const key = keys.keys[keys.offset + i]!;
    if (key !== 0 && key !== t.y0Loss && !seen.includes(key)) out.push(key);
  }
  return out;
}

/** Names the units of a Y-loss key, e.g. `Hex+Pen`. */
export function describeKey(key: number, rules: CompiledRuleSet): string {
  const parts: string[] = [];
  for (let u = 0; u < rules.units.length; u++) {
    const n = Math.floor(key / 8 ** u) % 8;
    if (n > 0) parts.push(n === 1 ? rules.units[u]!.name : `${n}${rules.units[u]!.name}`);
  }
  return parts.join('+');
}

/** Domon–Costello style label of a Y-type ion: Y{residues kept}, radicals, small and cross-ring losses. */
function yLabel(d: Derivation, comp: Uint8Array, rules: CompiledRuleSet, isY0: boolean): string {
  let kept = 0;
  let acylsLost = 0;
  let residuesLost = 0;
  for (let u = 0; u < comp.length; u++) {
    if (rules.units[u]!.kind === 'residue') {
      kept += comp[u]! - d.removed[u]!;
      residuesLost += d.removed[u]!;
    } else acylsLost += d.removed[u]!;
  }
  const combo = rules.lossCombos[d.combo]!;
  let base: string;
  if (residuesLost === 0 && acylsLost === 0) base = d.core === 1 ? 'M(core)' : 'M';
  else if (residuesLost === 0) base = `M−${describeRemoved(d.removed, rules, 'acyl')}`;
  else base = isY0 ? 'Y0' : `Y${kept}`;
  if (combo.crossRing >= 0) {
    // Domon–Costello ⁰˒ʲX with the residue count kept; both cleavages of a di-C-glycoside are named.
    const names = [combo.crossRing, combo.crossRing2]
      .filter((x) => x >= 0)
      .map((x) => rules.crossRingNames[x]!);
    const crossCount = names.length;
    const water = combo.size > crossCount ? '−H2O' : '';
    return `${names.join('/')}${kept > 0 ? kept : ''}${water}`;
  }
  let label = base;
  if (d.radical) label = `[${base}−H]•`;
  if (combo.size > 0) label += `−${combo.name}`;
  return label;
}

function describeRemoved(removed: Uint8Array, rules: CompiledRuleSet, kind: 'acyl' | 'residue'): string {
  const parts: string[] = [];
  removed.forEach((n, u) => {
    if (n > 0 && rules.units[u]!.kind === kind)
      parts.push(n === 1 ? rules.units[u]!.name : `${n}${rules.units[u]!.name}`);
  });
  return parts.join('+');
}

function bLabel(c: CationDerivation, rules: CompiledRuleSet): string {
  const water = c.water;
  let residues = 0;
  let acyl = '';
  c.units.forEach((n, u) => {
    if (rules.units[u]!.kind === 'residue') residues += n;
    else if (n > 0) acyl = rules.units[u]!.name;
  });
  if (residues === 0) return `acylium (${acyl})`;
  return `B${residues}${water ? '−H2O' : ''}`;
}

/** Identity of a candidate across hypotheses: precursor, Y0, composition and stacking. */
export function candidateKey(c: EvaluatedCandidate): string {
  return `${c.hypothesis.key}|${formulaKey(c.y0.counts, c.y0.charge)}|${c.interpretation.composition.units.join(',')}|${c.topology.notation}`;
}
