import { type Counts, NE } from '../graph/counts.js';
import type { Derivation, FragNode, HypothesisGraph } from '../graph/fragment-graph.js';
import type { CompiledRuleSet } from '../rules/compile.js';
import type { CleanSpectrum } from '../spectrum/clean.js';
import type { TreeSolution } from '../tree/graph.js';
import { fragmentDelta, type Interpretation, type PrecursorHypothesis } from './precursor.js';
import { enumerateTopologies, removedKey, type Topology } from './topology.js';

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
  readonly matches: CandidateMatch[];
  /** Ions predicted but not observed: 'Y0', 'X' (cross-ring), or a Y-loss key ({@link removedKey}). */
  readonly missing: (number | 'Y0' | 'X')[];
  /** Whether the aglycone is evidenced: Y0 (or its radical / water loss) or C-glycoside cross-ring ions. */
  readonly keyIonSeen: boolean;
  readonly treeScore: number;
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
}

const topologyCache = new WeakMap<CompiledRuleSet, Map<string, Topology[]>>();

function topologiesFor(rules: CompiledRuleSet, units: Uint8Array, maxCLinked: number): Topology[] {
  let cache = topologyCache.get(rules);
  if (!cache) {
    cache = new Map();
    topologyCache.set(rules, cache);
  }
  const key = `${units.join(',')}|${maxCLinked}`;
  let list = cache.get(key);
  if (!list) {
    list = enumerateTopologies(units, rules.units, { maxCLinked, limit: 3000 });
    cache.set(key, list);
  }
  return list;
}

/**
 * Scores every candidate structure of one precursor hypothesis: each interpretation (aglycone + composition)
 * in each topology. A candidate explains a peak when one of the peak's formula explanations is an ion the
 * candidate predicts (its Y-ion ladder, with small losses, radical Y ions in negative mode, cross-ring ions
 * of C-linked residues, oxonium and acylium ions); it is penalised for strong ions it predicts but misses.
 */
export function evaluateCandidates(
  h: PrecursorHypothesis,
  hg: HypothesisGraph,
  tree: TreeSolution,
  spectrum: CleanSpectrum,
  rules: CompiledRuleSet,
  options: EvaluateOptions,
): EvaluatedCandidate[] {
  const w = rules.rules.scoring;
  const out: EvaluatedCandidate[] = [];
  // Peaks with their nodes (every explanation, in or out of the tree).
  const byPeak = new Map<number, FragNode[]>();
  for (let v = 1; v < hg.nodes.length; v++) {
    const n = hg.nodes[v]!;
    const list = byPeak.get(n.peak);
    if (list) list.push(n);
    else byPeak.set(n.peak, [n]);
  }
  const precursorShare = spectrum.precursorIndex >= 0 ? spectrum.intensity[spectrum.precursorIndex]! : 0;
  const crossSeen = hg.nodes.some((n) => n.derivs.some((d) => rules.lossCombos[d.combo]!.crossRing >= 0));

  // Upper bound of each composition's weighted explained intensity: every peak it can read at full weight.
  const bound = new Float64Array(hg.compositions.length).fill(precursorShare);
  const peakWeight = new Float64Array(hg.compositions.length);
  for (const [peak, nodes] of byPeak) {
    peakWeight.fill(0);
    for (const n of nodes) {
      for (const d of n.derivs) {
        const combo = rules.lossCombos[d.combo]!;
        const wgt = combo.crossRing >= 0 ? 1 : 0.7 ** combo.size;
        if (wgt > peakWeight[d.comp]!) peakWeight[d.comp] = wgt;
      }
      for (const c of n.cations) if (peakWeight[c.comp]! < 0.8) peakWeight[c.comp] = 0.8;
    }
    for (let ci = 0; ci < peakWeight.length; ci++) bound[ci]! += peakWeight[ci]! * spectrum.intensity[peak]!;
  }
  const window = options.window ?? 4;
  const order = h.interpretations
    .map((interp) => ({ interp, ci: hg.compositions.indexOf(interp.composition.units) }))
    .filter((x) => x.ci >= 0)
    .sort((a, b) => bound[b.ci]! - bound[a.ci]!);
  for (const { interp, ci } of order) {
    if (10 * bound[ci]! + 0.05 * tree.score < options.best.score - window) continue;
    const compUnits = hg.compositions[ci]!;
    const aglCounts = interp.aglycone.kind === 'library' ? interp.aglycone.group.counts : interp.aglycone.counts;
    const cation = interp.aglycone.kind === 'library' && interp.aglycone.group.cation;
    const frag = fragmentDelta(interp.ion, rules);
    const y0Counts = new Int32Array(NE);
    for (let e = 0; e < NE; e++) y0Counts[e] = aglCounts[e]! + (cation ? 0 : frag.counts[e]!);
    const y0 = { counts: y0Counts, charge: cation ? 1 : frag.charge };

    // Per peak: which Y-loss keys / B keys it can be, under this composition.
    type Reading = { node: FragNode; deriv?: Derivation; bKey?: number; water?: number };
    const readings: { peak: number; intensity: number; list: Reading[] }[] = [];
    for (const [peak, nodes] of byPeak) {
      const list: Reading[] = [];
      for (const n of nodes) {
        for (const d of n.derivs) if (d.comp === ci) list.push({ node: n, deriv: d });
        for (const c of n.cations) if (c.comp === ci) list.push({ node: n, bKey: removedKey(c.units), water: c.water });
      }
      if (list.length) readings.push({ peak, intensity: spectrum.intensity[peak]!, list });
    }

    for (const topo of topologiesFor(rules, compUnits, crossSeen ? 2 : 0)) {
      let explained = precursorShare;
      // Intensity read as an ion itself counts fully, read as that ion after small losses a little less.
      let weighted = precursorShare;
      const matches: CandidateMatch[] = [];
      const seenLoss = new Map<number, number>(); // Y-loss key → intensity seen
      let crossIntensity = 0;
      for (const r of readings) {
        let label: string | undefined;
        let node: FragNode | undefined;
        let bestWeight = 0;
        let bestKey = -1;
        for (const x of r.list) {
          if (x.deriv) {
            const d = x.deriv;
            const key = removedKey(d.removed);
            if (!topo.yLosses.has(key)) continue;
            const combo = rules.lossCombos[d.combo]!;
            if (combo.crossRing >= 0 && !topo.cLinked) continue;
            const lbl = yLabel(d, compUnits, rules, key === topo.y0Loss && !topo.cLinked);
            const weight = combo.crossRing >= 0 ? 1 : 0.7 ** combo.size;
            if (label && weight <= bestWeight) continue;
            label = lbl;
            bestWeight = weight;
            node = x.node;
            bestKey = combo.crossRing >= 0 ? -2 : combo.size === 0 ? key : -1;
            continue;
          }
          if (x.bKey !== undefined && topo.bUnits.has(x.bKey) && !label) {
            label = bLabel(x.node, compUnits, rules, x.water ?? 0);
            bestWeight = 0.8;
            node = x.node;
          }
        }
        if (label && node) {
          explained += r.intensity;
          weighted += r.intensity * bestWeight;
          matches.push({ node, label });
          if (bestKey >= 0) seenLoss.set(bestKey, (seenLoss.get(bestKey) ?? 0) + r.intensity);
          if (bestKey === -2) crossIntensity += r.intensity;
        }
      }
      // Missing ions the topology predicts.
      const missing: (number | 'Y0' | 'X')[] = [];
      let penalty = 0;
      const y0Seen = (seenLoss.get(topo.y0Loss) ?? 0) > 0;
      const keyIonSeen = topo.cLinked ? crossIntensity > 0 || y0Seen : y0Seen;
      if (!topo.cLinked && !y0Seen) {
        penalty += 2 * w.missingIon;
        missing.push('Y0');
      }
      if (topo.cLinked && crossIntensity === 0) {
        penalty += 2 * w.missingIon;
        missing.push('X');
      }
      for (const key of topo.yLosses) {
        if (key === 0 || key === topo.y0Loss) continue;
        if (!seenLoss.has(key)) {
          penalty += 0.25 * w.missingIon;
          missing.push(key);
        }
      }
      const nUnits = compUnits.reduce((s, x) => s + x, 0);
      const ppmTerm = (h.ppm / options.precursorPpm) ** 2 * 0.5;
      const unknown = interp.aglycone.kind === 'unknown' ? 1.5 : 0;
      const cPenalty = topo.cLinked ? 0.3 : 0; // O-glycosides are the commoner reading when evidence is equal
      const score = 10 * weighted - penalty + 0.05 * tree.score - ppmTerm - unknown - 0.1 * nUnits - cPenalty;
      if (score > options.best.score) options.best.score = score;
      out.push({
        hypothesis: h,
        interpretation: interp,
        topology: topo,
        y0,
        explained: Math.min(1, explained),
        score,
        matches,
        missing,
        keyIonSeen,
        treeScore: tree.score,
      });
    }
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
    const x = rules.crossRingNames[combo.crossRing]!;
    const water = combo.size > 1 ? '−H2O' : '';
    return `${x}${kept > 0 ? kept : ''}${water}`;
  }
  let label = base;
  if (d.radical) label = `[${base}−H]•`;
  if (combo.size > 0) label += `−${combo.name}`;
  return label;
}

function describeRemoved(removed: Uint8Array, rules: CompiledRuleSet, kind: 'acyl' | 'residue'): string {
  const parts: string[] = [];
  removed.forEach((n, u) => {
    if (n > 0 && rules.units[u]!.kind === kind) parts.push(n === 1 ? rules.units[u]!.name : `${n}${rules.units[u]!.name}`);
  });
  return parts.join('+');
}

function bLabel(node: FragNode, comp: Uint8Array, rules: CompiledRuleSet, water: number): string {
  const c = node.cations.find((x) => x.units.length === comp.length);
  if (!c) return 'B';
  let residues = 0;
  let acyl = '';
  c.units.forEach((n, u) => {
    if (rules.units[u]!.kind === 'residue') residues += n;
    else if (n > 0) acyl = rules.units[u]!.name;
  });
  if (residues === 0) return `acylium (${acyl})`;
  return `B${residues}${water ? '−H2O' : ''}`;
}
