import {
  candidateKey,
  candidateMatches,
  candidateMissing,
  describeKey,
  type EvaluatedCandidate,
} from '../candidates/evaluate.js';
import { countsMass, countsString, formulaKey, NE } from '../graph/counts.js';
import { edgePrior } from '../graph/fragment-graph.js';
import { edgeWeight } from '../tree/greedy.js';
import type { CompiledRuleSet } from '../rules/compile.js';
import type { SolvedHypothesis } from '../score/score-spectrum.js';
import type { CleanSpectrum } from '../spectrum/clean.js';
import type { Spectrum } from '../spectrum/spectrum.js';
import type { CandidateResult, SpectrumResult, TreeEdge, TreeNode } from './result.js';

/** Cautions every annotated result carries (MS/MS cannot settle these). */
export const STANDARD_CAUTIONS = [
  'Putative identification from MS/MS: sugar stereochemistry (e.g. glucose vs galactose) and linkage positions are not determined.',
  'Confidence level 1 requires comparison with a reference standard.',
];

const ANTHOCYANIDIN_CLASS = /anthocyan/i;

/** An unassigned result with its reason. */
export function unassignedResult(
  spectrum: Spectrum,
  polarity: 'positive' | 'negative',
  code: string,
  message: string,
): SpectrumResult {
  return {
    id: spectrum.id,
    status: 'unassigned',
    reason: { code, message },
    precursor: {
      mz: spectrum.precursor.mz,
      charge: spectrum.precursor.charge ?? (polarity === 'positive' ? 1 : -1),
      ionType: null,
    },
    candidates: [],
    cautions: [],
  };
}

interface Ranked {
  c: EvaluatedCandidate;
  /** Formula key of the candidate's Y0 ion. */
  readonly y0Key: number;
  solved: SolvedHypothesis;
  names: string[];
  classes: string[];
  /** Ion type of each name's reading (cyanidin [M]+ beside kaempferol [M+H]+). */
  ions: string[];
}

/**
 * Ranks the evaluated candidates of every hypothesis, merges same-formula aglycones into one candidate with
 * alternatives, marks ties, assigns confidence levels and writes the result (tree of the best hypothesis).
 */
export function buildAnnotatedResult(
  spectrum: Spectrum,
  polarity: 'positive' | 'negative',
  clean: CleanSpectrum,
  solved: SolvedHypothesis[],
  compiled: CompiledRuleSet,
  user: { userKeys: ReadonlyMap<string, string>; userNotes: readonly string[] } = {
    userKeys: new Map(),
    userNotes: [],
  },
): SpectrumResult {
  const rules = compiled.rules;
  const w = rules.scoring;
  // Merge candidates that differ only in which same-formula library aglycone they name: same precursor
  // formula, Y0 formula, composition and stacking. Bucketed by a number, then compared in full.
  const buckets = new Map<number, Ranked[]>();
  const all: Ranked[] = [];
  for (const s of solved) {
    for (const c of s.candidates) {
      const agl = c.interpretation.aglycone;
      const y0Key = formulaKey(c.y0.counts, c.y0.charge);
      // Always a fraction (never a small integer), so the optimised code sees one kind of number.
      const bucket =
        (c.hypothesis.key % 0x100000) * 0x100000 +
        (y0Key % 0x100000) +
        c.interpretation.compositionIndex +
        0.5;
      let list = buckets.get(bucket);
      if (!list) {
        list = [];
        buckets.set(bucket, list);
      }
      const prev = list.find((r) => r.y0Key === y0Key && sameCandidate(r.c, c));
      const ion = c.interpretation.ion.name;
      if (!prev) {
        const r: Ranked =
          agl.kind === 'library'
            ? {
                c,
                y0Key,
                solved: s,
                names: agl.group.members.map((m) => m.name),
                classes: agl.group.members.map((m) => m.class),
                ions: agl.group.members.map(() => ion),
              }
            : { c, y0Key, solved: s, names: ['unknown'], classes: [''], ions: [ion] };
        list.push(r);
        all.push(r);
      } else {
        if (c.score > prev.c.score) prev.c = c;
        const members = agl.kind === 'library' ? agl.group.members : [{ name: 'unknown', class: '' }];
        for (const m of members) {
          if (!prev.names.includes(m.name)) {
            prev.names.push(m.name);
            prev.classes.push(m.class);
            prev.ions.push(ion);
          }
        }
      }
    }
  }
  const ranked = all.sort((a, b) => b.c.score - a.c.score);
  const best = ranked[0];
  const cautions: string[] = [...user.userNotes];
  const minEvidence = best && best.c.explained >= w.minExplained && best.c.keyIonSeen;
  if (!best || !minEvidence) {
    const r = unassignedResult(
      spectrum,
      polarity,
      best ? 'insufficient-evidence' : 'no-candidate',
      best
        ? `best candidate explains ${(best.c.explained * 100).toFixed(0)}% of the intensity${best.c.keyIonSeen ? '' : ' and its aglycone ion is not observed'}; at least ${(w.minExplained * 100).toFixed(0)}% with the aglycone ion is required`
        : 'no candidate structure could be built',
    );
    return r;
  }
  const exact = best.solved.tree.exact;
  if (!exact)
    cautions.push("Fragmentation tree solved by the heuristic (graph beyond the exact solver's size).");
  if (clean.precursorIndex < 0) cautions.push('Precursor ion not observed in the MS2 spectrum.');

  const limit = rules.limits.maxCandidates;
  const formulaCount = new Set(ranked.map((r) => r.c.hypothesis.key)).size;
  // One candidate per structure up to its stacking (precursor formula, aglycone, composition): its best
  // stacking leads and the other stackings that fit ride along, so the ranks hold distinct structures rather
  // than one composition stacked several ways. User-supplied candidates always stand on their own.
  const groups: { lead: Ranked; others: Ranked[] }[] = [];
  // The groups other candidates may join (a user-supplied candidate's group is its own).
  const shared: { lead: Ranked; others: Ranked[] }[] = [];
  for (const r of ranked) {
    if (user.userKeys.size > 0 && user.userKeys.has(candidateKey(r.c))) {
      groups.push({ lead: r, others: [] });
      continue;
    }
    const g = shared.find((x) => sameStructure(x.lead, r));
    if (g) g.others.push(r);
    else {
      const fresh = { lead: r, others: [] };
      shared.push(fresh);
      groups.push(fresh);
    }
  }
  const candidates: CandidateResult[] = [];
  let stackingTie = false;
  for (let i = 0; i < groups.length; i++) {
    const r = groups[i]!.lead;
    const others = groups[i]!.others;
    // Past the limit, only user-supplied candidates are still reported (with their true rank).
    if (candidates.length >= limit) {
      if (user.userKeys.size === 0) break;
      if (!user.userKeys.has(candidateKey(r.c))) continue;
    }
    const tied = i > 0 && Math.abs(groups[i - 1]!.lead.c.evidence - r.c.evidence) < w.tieMargin;
    const userLabel = user.userKeys.size > 0 ? user.userKeys.get(candidateKey(r.c)) : undefined;
    const built = candidateResult(r, others, i + 1, tied, userLabel, formulaCount, spectrum, clean, compiled);
    if (built.note && i === 0) cautions.push(built.note);
    if (built.stackingTie) stackingTie = true;
    candidates.push(built.result);
  }
  if (candidates.some((c) => c.tiedWithPrevious) || candidates[1]?.tiedWithPrevious) {
    cautions.push('Some candidates are tied: the spectrum does not separate them.');
  }
  if (stackingTie) {
    cautions.push(
      'The stacking of some candidates is not settled: other stackings (listed with them) fit the spectrum as well.',
    );
  }
  return {
    id: spectrum.id,
    status: 'annotated',
    precursor: {
      mz: spectrum.precursor.mz,
      charge: best.c.hypothesis.charge,
      ionType: candidates[0]?.ionType ?? best.c.interpretation.ion.name,
    },
    candidates,
    tree: reportTree(best.solved, clean, compiled),
    cautions: [...STANDARD_CAUTIONS, ...cautions],
  };
}

/** Other stackings listed with a candidate at most. */
const MAX_OTHER_TOPOLOGIES = 4;

/**
 * Whether two candidates are one structure up to their stacking: precursor formula, Y0 formula, composition
 * and which residues are C-linked (C- and O-glycosides of one composition are different structures, and
 * different classes).
 */
function sameStructure(a: Ranked, b: Ranked): boolean {
  if (a.c.hypothesis.key !== b.c.hypothesis.key || a.y0Key !== b.y0Key) return false;
  const ia = a.c.interpretation;
  const ib = b.c.interpretation;
  if (ia.compositionIndex !== ib.compositionIndex) return false;
  if (ia.compositionIndex < 0 && !sameBytes(ia.composition.units, ib.composition.units)) return false;
  return sameBytes(a.c.topology.cCounts, b.c.topology.cCounts);
}

function sameBytes(a: Uint8Array, b: Uint8Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

/** Whether two candidates with the same Y0 formula are one structure (what {@link candidateKey} identifies). */
function sameCandidate(a: EvaluatedCandidate, b: EvaluatedCandidate): boolean {
  if (a.hypothesis.key !== b.hypothesis.key) return false;
  if (a.topology !== b.topology) {
    // A bucket holds the other stackings of one interpretation: distinct topologies there are distinct
    // stackings (each is scored once), so their notations need not be written to tell them apart.
    if (a.interpretation === b.interpretation || a.topology.notation !== b.topology.notation) return false;
  }
  return sameBytes(a.interpretation.composition.units, b.interpretation.composition.units);
}

/** One candidate of the result: names, substituents, stackings, matched peaks and notes. */
function candidateResult(
  r: Ranked,
  others: readonly Ranked[],
  rank: number,
  tied: boolean,
  userLabel: string | undefined,
  formulaCount: number,
  spectrum: Spectrum,
  clean: CleanSpectrum,
  compiled: CompiledRuleSet,
): { result: CandidateResult; note: string | undefined; stackingTie: boolean } {
  const c = r.c;
  const w = compiled.rules.scoring;
  const { primary, ion, alternatives, note } = chooseName(r, spectrum);
  let stackingTie = false;
  const agl = c.interpretation.aglycone;
  const aglClass = agl.kind === 'library' ? r.classes[r.names.indexOf(primary)] : undefined;
  const notes: string[] = [];
  if (userLabel !== undefined) notes.push(`User-supplied candidate: ${userLabel}.`);
  if (alternatives.length > 0) {
    notes.push(`Same ion formula as ${alternatives.join(', ')}: MS/MS cannot tell these aglycones apart.`);
  }
  const missing = candidateMissing(c);
  if (missing.length > 0) {
    const names = missing
      .slice(0, 6)
      .map((m) => (m === 'X' ? 'cross-ring X ions' : m === 'Y0' ? 'Y0' : `Y(−${describeKey(m, compiled)})`));
    notes.push(`Predicted but not observed: ${names.join(', ')}.`);
  }
  const level = confidence(c, formulaCount, agl.kind === 'library', w.minExplained);
  const aglText = agl.kind === 'library' ? primary : `<${countsString(agl.counts)}>`;
  const result: CandidateResult = {
    rank,
    aglycone: {
      name: primary,
      formula: countsString(c.y0.counts, c.y0.charge),
      ...(aglClass ? { class: aglClass } : {}),
      alternatives,
    },
    substituents: substituents(c, compiled),
    topology: `${aglText}${c.topology.notation}`,
    ...(others.length
      ? {
          otherTopologies: others.slice(0, MAX_OTHER_TOPOLOGIES).map((o) => {
            const tiedWithBest = Math.abs(o.c.evidence - c.evidence) < w.tieMargin;
            if (tiedWithBest) stackingTie = true;
            return {
              topology: `${aglText}${o.c.topology.notation}`,
              score: round(o.c.score, 3),
              ...(tiedWithBest ? { tiedWithBest: true } : {}),
            };
          }),
        }
      : {}),
    ionType: ion,
    formula: countsString(c.hypothesis.counts, c.hypothesis.charge),
    ppm: round(c.hypothesis.ppm, 2),
    explainedIntensity: round(c.explained, 4),
    score: round(c.score, 3),
    confidenceLevel: level,
    ...(tied ? { tiedWithPrevious: true } : {}),
    source: userLabel !== undefined ? 'user' : 'rules',
    matchedPeaks: [
      // The precursor ion left in the MS2 spectrum counts as explained: list it too.
      ...(clean.precursorIndex >= 0
        ? [
            {
              mz: round(clean.mz[clean.precursorIndex]!, 5),
              intensity: round(clean.intensity[clean.precursorIndex]!, 4),
              label: 'precursor',
              formula: countsString(c.hypothesis.counts, c.hypothesis.charge),
              ppm: round(((clean.mz[clean.precursorIndex]! - c.hypothesis.mz) / c.hypothesis.mz) * 1e6, 2),
            },
          ]
        : []),
      ...candidateMatches(c, compiled).map((m) => ({
        mz: round(clean.mz[m.node.peak]!, 5),
        intensity: round(clean.intensity[m.node.peak]!, 4),
        label: m.label,
        formula: countsString(m.node.counts, m.node.charge),
        ppm: round(m.node.ppm, 2),
      })),
    ].sort((a, b) => b.mz - a.mz),
    ...(notes.length ? { notes } : {}),
  };
  return { result, note, stackingTie };
}

/** Powers of ten for {@link round} (a table: `10 ** digits` is a call to the power function). */
const POW10 = [1, 10, 100, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8];

function round(x: number, digits: number): number {
  const f = POW10[digits] ?? 10 ** digits;
  return Math.round(x * f) / f;
}

/** Schymanski et al. 2014 levels as Peel applies them (docs/confidence.md). */
function confidence(
  c: EvaluatedCandidate,
  formulaCount: number,
  library: boolean,
  minExplained: number,
): number {
  const strong = c.explained >= minExplained && c.keyIonSeen;
  if (library && strong) return 3; // tentative structure: aglycone + sugar classes, stereo/positions open
  if (strong && formulaCount === 1) return 4; // unequivocal molecular formula
  return 5;
}

function chooseName(
  r: Ranked,
  spectrum: Spectrum,
): { primary: string; ion: string; alternatives: string[]; note?: string } {
  const all = { primary: r.names[0]!, ion: r.ions[0]!, alternatives: r.names.slice(1) };
  if (r.names.length <= 1) return all;
  const meta = spectrum.metadata;
  const lambda = meta?.lambdaMaxNm;
  const wanted = meta?.compoundClass?.toLowerCase();
  // Indices the chemist's facts favour; they separate only when they favour some names and not others.
  let keep: number[] = [];
  let why = '';
  if (wanted) {
    keep = r.classes.flatMap((c, i) =>
      c.toLowerCase() === wanted || c.toLowerCase().includes(wanted) ? [i] : [],
    );
    why = `compound class "${meta?.compoundClass}" given with the spectrum`;
  }
  if ((keep.length === 0 || keep.length === r.names.length) && typeof lambda === 'number') {
    // Anthocyanins absorb near 520 nm in the visible; flavonols and flavones below ~380 nm (common practice).
    const antho = lambda >= 480;
    keep = r.classes.flatMap((c, i) => (ANTHOCYANIDIN_CLASS.test(c) === antho ? [i] : []));
    why = `visible absorbance maximum ${lambda} nm given with the spectrum`;
  }
  if (keep.length === 0 || keep.length === r.names.length) return all;
  const pick = keep[0]!;
  const rest = r.names.filter((_, i) => i !== pick);
  const kept = keep.map((i) => r.names[i]!);
  const note =
    keep.length === 1
      ? `Tie between same-formula aglycones (${r.names.join(', ')}) broken by the ${why}.`
      : `Same-formula aglycones (${r.names.join(', ')}) narrowed to ${kept.join(', ')} by the ${why}.`;
  return { primary: r.names[pick]!, ion: r.ions[pick]!, alternatives: rest, note };
}

function substituents(c: EvaluatedCandidate, compiled: CompiledRuleSet): CandidateResult['substituents'] {
  const t = c.topology;
  return t.unit.map((u, i) => ({ residue: compiled.units[u]!.name, linkage: t.linkage[i]! }));
}

function reportTree(
  s: SolvedHypothesis,
  clean: CleanSpectrum,
  compiled: CompiledRuleSet,
): SpectrumResult['tree'] {
  const { graph, nodes } = s.graph;
  const parent = s.tree.parent;
  const ids = new Map<number, number>();
  const outNodes: TreeNode[] = [];
  const outEdges: TreeEdge[] = [];
  for (let v = 0; v < graph.nodeCount; v++) {
    if (parent[v]! < 0) continue;
    const n = nodes[v]!;
    ids.set(v, outNodes.length);
    const observed = n.peak >= 0 ? clean.mz[n.peak]! : n.mz;
    outNodes.push({
      id: outNodes.length,
      mz: round(observed, 5),
      formula: countsString(n.counts, n.charge),
      intensity: n.peak >= 0 ? round(clean.intensity[n.peak]!, 4) : 0,
      ppm: round(n.peak >= 0 ? ((observed - n.mz) / n.mz) * 1e6 : 0, 2),
    });
  }
  for (let v = 1; v < graph.nodeCount; v++) {
    const p = parent[v]!;
    if (p < 0) continue;
    const loss = new Int32Array(NE);
    for (let e = 0; e < NE; e++) loss[e] = nodes[p]!.counts[e]! - nodes[v]!.counts[e]!;
    const reading = edgePrior(nodes[p]!, nodes[v]!, p === 0, compiled, compiled.rules.scoring);
    const w = edgeWeight(graph, p, v);
    outEdges.push({
      from: ids.get(p)!,
      to: ids.get(v)!,
      loss: countsMass(loss) > 0 ? countsString(loss) : '',
      ...(reading ? { lossName: lossName(reading, compiled) } : {}),
      score: round(w, 3),
    });
  }
  return {
    nodes: outNodes,
    edges: outEdges,
    score: round(s.tree.score, 3),
    solver: s.tree.exact ? 'exact' : 'heuristic',
  };
}

function lossName(r: NonNullable<ReturnType<typeof edgePrior>>, compiled: CompiledRuleSet): string {
  if (!r.from || !r.to) return r.kind;
  const parts: string[] = [];
  r.to.removed.forEach((n, u) => {
    const d = n - r.from!.removed[u]!;
    if (d > 0) parts.push(d === 1 ? compiled.units[u]!.name : `${d}${compiled.units[u]!.name}`);
  });
  const cp = compiled.lossCombos[r.from.combo]!;
  const cc = compiled.lossCombos[r.to.combo]!;
  if (cc.size > cp.size) parts.push(cp.size === 0 ? cc.name : `(${cc.name})−(${cp.name})`);
  if (r.to.radical > r.from.radical) parts.push('H•');
  if (r.to.core !== r.from.core) parts.push('adduct');
  return parts.join('+') || r.kind;
}
