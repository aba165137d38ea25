import { ELECTRON_MASS } from '../chem/elements.js';
import type { PrecursorHypothesis } from '../candidates/precursor.js';
import { fragmentDelta, massBins } from '../candidates/precursor.js';
import { countsKey, LruCache } from '../candidates/cache.js';
import type { CompiledRuleSet } from '../rules/compile.js';
import { type CleanSpectrum, tolDa } from '../spectrum/clean.js';
import type { FragGraph } from '../tree/graph.js';
import { type Counts, countsMass, countsRdbe, formulaKey, isSubCounts, NE } from './counts.js';

/**
 * How a fragment formula derives from the precursor under one composition: which units it lost, which
 * small-loss combination, whether it also lost an H• (radical Y ions in negative mode), from which core
 * (0 the precursor, 1 the precursor after its adduct loss or charge reduction).
 */
export interface Derivation {
  /** Index of the composition among the hypothesis' distinct compositions (a node lists its derivations by ascending `comp`). */
  readonly comp: number;
  readonly removed: Uint8Array;
  readonly combo: number;
  readonly radical: 0 | 1;
  readonly core: number;
}

/** A sugar oxonium (B) or acylium ion explanation: the units it holds (positive mode). */
export interface CationDerivation {
  readonly comp: number;
  readonly units: Uint8Array;
  /** Water lost from the oxonium ion (0 or 1). */
  readonly water: 0 | 1;
}

/** One node: one formula explaining one peak, with every derivation that gives that formula. */
export interface FragNode {
  readonly peak: number;
  readonly counts: Counts;
  readonly charge: number;
  readonly mz: number;
  readonly ppm: number;
  readonly derivs: Derivation[];
  readonly cations: CationDerivation[];
  /** Explained by decomposition only (no rule derivation). */
  readonly generic: boolean;
}

/** An ion the fragments descend from: the precursor (core 0), or the precursor after its adduct loss. */
export interface Core {
  readonly counts: Counts;
  readonly charge: number;
  /** Ion types whose fragments descend from this core; undefined for the precursor itself (all). */
  readonly ions: Set<string> | undefined;
}

/** Kinds of loss an edge can carry (for scoring and reporting). */
export type LossKind = 'glycan' | 'small' | 'cross-ring' | 'adduct' | 'cation' | 'unknown' | 'implausible';

/** The fragmentation graph of one precursor hypothesis, with its nodes' chemistry. */
export interface HypothesisGraph {
  readonly graph: FragGraph;
  /** Node 0 is the precursor (root). */
  readonly nodes: FragNode[];
  /** Distinct compositions (unit count vectors) of the hypothesis, indexed by `Derivation.comp`. */
  readonly compositions: readonly Uint8Array[];
  /** Per edge (in graph CSR order), the kind of loss. */
  readonly edgeKind: LossKind[];
  /** The ions fragments descend from (`Derivation.core` indexes it). */
  readonly cores: readonly Core[];
}

/** Tolerances and weights of {@link buildHypothesisGraph}. */
export interface GraphOptions {
  fragmentPpm: number;
  floorDa: number;
  polarity: 'positive' | 'negative';
  /** Peaks at least this fraction of the base peak that no rule explains get decomposition-only nodes. */
  genericMinRelative: number;
  /** At most this many decomposition-only explanations per peak. */
  genericPerPeak: number;
}

/** Whether every unit a fragment keeps (composition − removed) is a residue that may be C-linked. */
function keepsOnlyCLinkable(comp: Uint8Array, removed: Uint8Array, cLinkable: Uint8Array): boolean {
  let kept = 0;
  for (let u = 0; u < comp.length; u++) {
    const n = comp[u]! - removed[u]!;
    if (n === 0) continue;
    if (cLinkable[u] !== 1) return false;
    kept += n;
  }
  return kept > 0;
}

/** Loss combinations of one kind of fragment, sorted by mass, with their positions in the rule order. */
interface ComboList {
  /** Combination indices (into `lossCombos`), by ascending mass. */
  readonly ids: Int32Array;
  readonly mass: Float64Array;
  /** Position of each in the rule order (matches are reported in that order). */
  readonly pos: Int32Array;
  /** Combination index by position. */
  readonly byPos: Int32Array;
  /** Where the masses of each whole dalton start ({@link massBins}): a lookup instead of a binary search. */
  readonly bins: Int32Array;
}

/** The four lists a fragment may use: plain losses, ladder ends (plus multi-loss), cross-ring, both. */
interface ComboLists {
  readonly plain: ComboList;
  readonly ends: ComboList;
  readonly cross: ComboList;
  readonly all: ComboList;
}

const comboListCache = new WeakMap<CompiledRuleSet, Partial<Record<'positive' | 'negative', ComboLists>>>();

function comboLists(rules: CompiledRuleSet, polarity: 'positive' | 'negative'): ComboLists {
  let byPolarity = comboListCache.get(rules);
  if (!byPolarity) {
    byPolarity = {};
    comboListCache.set(rules, byPolarity);
  }
  const hit = byPolarity[polarity];
  if (hit) return hit;
  const groups = rules.comboGroups[polarity];
  const make = (order: number[]): ComboList => {
    const byMass = order
      .map((k, pos) => ({ k, pos }))
      .sort((a, b) => rules.lossCombos[a.k]!.mass - rules.lossCombos[b.k]!.mass);
    const mass = Float64Array.from(byMass, (x) => rules.lossCombos[x.k]!.mass);
    return {
      ids: Int32Array.from(byMass, (x) => x.k),
      mass,
      bins: massBins(mass),
      pos: Int32Array.from(byMass, (x) => x.pos),
      byPos: Int32Array.from(order),
    };
  };
  const ends = [...groups.plain, ...groups.multi];
  const lists: ComboLists = {
    plain: make(groups.plain),
    ends: make(ends),
    cross: make([...groups.plain, ...groups.cross]),
    all: make([...ends, ...groups.cross]),
  };
  byPolarity[polarity] = lists;
  return lists;
}

/** A unit count vector with what it weighs; one record per distinct vector, shared by every composition. */
interface UnitVector {
  readonly units: Uint8Array;
  readonly atoms: Int32Array;
  readonly mass: number;
  /** Units in it. */
  readonly size: number;
}

/** The sub-multisets of a composition, smallest first. */
interface SubMultisets {
  readonly list: readonly UnitVector[];
  /** 1 when what the composition keeps after losing sub-multiset i is C-linkable residues only (cross-ring ions). */
  readonly keepsCOnly: Uint8Array;
}

/**
 * Sub-multisets by rule set and composition. An entry is a list of shared records and a byte each (~0.3 KB),
 * so every composition of the rule set fits.
 */
const subCache = new WeakMap<CompiledRuleSet, LruCache<number | string, SubMultisets>>();

/** Unit vectors by rule set and key, each stored once (callers only read them). */
const vectors = new WeakMap<CompiledRuleSet, Map<number | string, UnitVector>>();

function internVector(v: Uint8Array, rules: CompiledRuleSet): UnitVector {
  let byKey = vectors.get(rules);
  if (!byKey) {
    byKey = new Map();
    vectors.set(rules, byKey);
  }
  const key = countsKey(v);
  const hit = byKey.get(key);
  if (hit) return hit;
  const atoms = new Int32Array(NE);
  let size = 0;
  for (let u = 0; u < v.length; u++) {
    if (!v[u]) continue;
    size += v[u]!;
    for (let e = 0; e < NE; e++) atoms[e]! += v[u]! * rules.units[u]!.counts[e]!;
  }
  const record: UnitVector = { units: v, atoms, mass: countsMass(atoms), size };
  // Bounded by the rule set's compositions and their sub-multisets; cleared should a rule set have vast ones.
  if (byKey.size > 200_000) byKey.clear();
  byKey.set(key, record);
  return record;
}

/** {@link subMultisets} with atoms and masses, memoised by the vector (compositions repeat across spectra). */
function subMultisetsCached(units: Uint8Array, rules: CompiledRuleSet): SubMultisets {
  let cache = subCache.get(rules);
  if (!cache) {
    cache = new LruCache(SUB_CACHE_SIZE);
    subCache.set(rules, cache);
  }
  return cache.getOrSet(countsKey(units), () => {
    // One shared record per distinct vector: [Hex] is a sub-multiset of thousands of compositions.
    const list = subMultisets(units).map((v) => internVector(v, rules));
    const keepsCOnly = Uint8Array.from(list, (r) =>
      keepsOnlyCLinkable(units, r.units, rules.cLinkable) ? 1 : 0,
    );
    return { list, keepsCOnly };
  });
}

/** Compositions whose sub-multisets are kept: more than the default rule set has. */
const SUB_CACHE_SIZE = 10_000;

/**
 * Scratch buffers of {@link matchHypothesis}, reused from call to call: a typed array above 64 bytes is
 * allocated outside the JS heap, which costs far more than the arithmetic done in it.
 */
const atomScratch: Float64Array[] = [];
let matchScratch = new Int32Array(256);

/** Scratch buffer `slot` with room for `n` values (contents undefined; valid until the next call). */
function scratch(slot: number, n: number): Float64Array {
  let a = atomScratch[slot];
  if (!a || a.length < n) {
    a = new Float64Array(Math.max(n, 128));
    atomScratch[slot] = a;
  }
  return a;
}

/** Sub-multisets of a unit count vector, the empty one first. */
export function subMultisets(units: Uint8Array): Uint8Array[] {
  const out: Uint8Array[] = [];
  const cur = new Uint8Array(units.length);
  const walk = (i: number) => {
    if (i === units.length) {
      out.push(cur.slice());
      return;
    }
    for (let k = 0; k <= units[i]!; k++) {
      cur[i] = k;
      walk(i + 1);
    }
    cur[i] = 0;
  };
  walk(0);
  out.sort((a, b) => sum(a) - sum(b));
  return out;
}

function sum(a: Uint8Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i]!;
  return s;
}

/**
 * Builds the fragmentation graph of one precursor hypothesis: every peak explained by a rule derivation
 * (precursor − units − small losses − H•) or a sugar oxonium / acylium ion, plus decomposition-only
 * explanations (sub-formulas of the precursor) of intense peaks no rule explains. Edges join a formula to
 * each of its sub-formulas; their weights follow the rule priors, the child's mass error and intensity.
 */
export function buildHypothesisGraph(
  h: PrecursorHypothesis,
  spectrum: CleanSpectrum,
  rules: CompiledRuleSet,
  options: GraphOptions,
): HypothesisGraph {
  return finishGraph(matchHypothesis(h, spectrum, rules, options), spectrum, rules, options);
}

/** The rule-derived explanations of a hypothesis' peaks, before decomposition-only nodes and edges. */
export interface MatchedHypothesis {
  readonly hypothesis: PrecursorHypothesis;
  /** Node 0 is the precursor. */
  readonly nodes: FragNode[];
  readonly compositions: Uint8Array[];
  readonly cores: Core[];
}

/** First, cheap phase of {@link buildHypothesisGraph}: peaks explained by rule derivations. */
export function matchHypothesis(
  h: PrecursorHypothesis,
  spectrum: CleanSpectrum,
  rules: CompiledRuleSet,
  options: GraphOptions,
): MatchedHypothesis {
  const units = rules.units;
  const nU = units.length;
  // Distinct compositions of the hypothesis.
  const comps: Uint8Array[] = [];
  const compIndex = new Map<number, number>();
  for (const it of h.interpretations) {
    if (!compIndex.has(it.compositionIndex)) {
      compIndex.set(it.compositionIndex, comps.length);
      comps.push(it.composition.units);
    }
  }
  // Cores: the precursor, and the precursor after its adduct loss or charge reduction, for every ion type
  // among the interpretations (one formula may be [M+HCOO]- of one molecule and [M-H]- of another).
  const cores: Core[] = [{ counts: h.counts, charge: h.charge, ions: undefined }];
  for (const it of h.interpretations) {
    const ion = it.ion;
    if (!rules.adductLosses.get(ion.name) && Math.abs(ion.charge) <= 1) continue;
    const frag = fragmentDelta(ion, rules);
    const c = new Int32Array(NE);
    for (let e = 0; e < NE; e++) c[e] = h.counts[e]! - ion.delta.counts[e]! + frag.counts[e]!;
    if (!c.every((x) => x >= 0)) continue;
    const key = formulaKey(c, frag.charge);
    const same = cores.find((k) => k.ions && formulaKey(k.counts, k.charge) === key);
    if (same) same.ions!.add(ion.name);
    else cores.push({ counts: c, charge: frag.charge, ions: new Set([ion.name]) });
  }
  const H_MASS = 1.00782503223;

  // Peaks as ion atom masses, ascending (the cleaned spectrum is sorted by m/z).
  const nPeaks = spectrum.mz.length;
  let base = 0;
  for (let i = 0; i < nPeaks; i++) base = Math.max(base, spectrum.intensity[i]!);
  const rootNode: FragNode = {
    peak: spectrum.precursorIndex,
    counts: h.counts,
    charge: h.charge,
    mz: h.mz,
    ppm: h.ppm,
    derivs: comps.map((c, ci) => ({
      comp: ci,
      removed: new Uint8Array(c.length),
      combo: 0,
      radical: 0,
      core: 0,
    })),
    cations: [],
    generic: false,
  };
  // Nodes found so far, in the order found; by formula key (the first node of that formula), and by formula and
  // peak for the rare formula that explains two peaks. (A formula key has up to 45 bits: no room for the peak
  // index in one exact number.)
  const found: FragNode[] = [];
  const byFormula = new Map<number, FragNode>();
  const byFormulaPeak = new Map<string, FragNode>();
  const nodeFor = (p: number, counts: Counts, charge: number): FragNode => {
    const key = formulaKey(counts, charge);
    let node = byFormula.get(key);
    if (node && node.peak !== p) node = byFormulaPeak.get(`${key}|${p}`);
    if (!node) {
      const theo = (countsMass(counts) - charge * ELECTRON_MASS) / Math.abs(charge);
      node = {
        peak: p,
        counts: Int32Array.from(counts),
        charge,
        mz: theo,
        ppm: ((spectrum.mz[p]! - theo) / theo) * 1e6,
        derivs: [],
        cations: [],
        generic: false,
      };
      if (byFormula.has(key)) byFormulaPeak.set(`${key}|${p}`, node);
      else byFormula.set(key, node);
      found.push(node);
    }
    return node;
  };
  // Peaks whose m/z lies within tolerance of an ion of atoms mass `atoms` and charge z.
  const peaksNear = (atoms: number, z: number, visit: (p: number) => void) => {
    const mz = (atoms - z * ELECTRON_MASS) / Math.abs(z);
    const tol = tolDa(mz, options.fragmentPpm, options.floorDa);
    let lo = 0;
    let hi = nPeaks;
    while (lo < hi) {
      const m = (lo + hi) >> 1;
      if (spectrum.mz[m]! < mz - tol) lo = m + 1;
      else hi = m;
    }
    for (let p = lo; p < nPeaks && spectrum.mz[p]! <= mz + tol; p++)
      if (p !== spectrum.precursorIndex) visit(p);
  };

  // Rule derivations: precursor (or core) − removed units − small-loss combination − H•, matched to peaks.
  // Multi-loss combinations are tried on the aglycone ion (Y0) and the precursor only, radicals on Y0 only:
  // phenolic aglycones shed H2O/CO/CO2 in series, intermediate Y ions seldom do.
  const tmp = new Int32Array(NE);
  const peakMz = spectrum.mz;
  // Multi-loss combinations on ladder ends only; cross-ring ones when a residue may be C-linked.
  const lists = comboLists(rules, options.polarity);
  // Peaks as ion atom masses (m/z × |z| + z electrons) per charge of a core, ascending like the m/z (in
  // scratch buffers: valid for this call).
  const atomsByCharge = new Map<number, Float64Array>();
  for (const core of cores) {
    const z = core.charge;
    if (atomsByCharge.has(z)) continue;
    const atoms = scratch(atomsByCharge.size, nPeaks);
    for (let p = 0; p < nPeaks; p++) atoms[p] = peakMz[p]! * Math.abs(z) + z * ELECTRON_MASS;
    atomsByCharge.set(z, atoms);
  }
  // Matches of one (removed, core) step, as (list position, radical, peak) codes sorted into the order a
  // combination-by-combination scan would give.
  let matches = matchScratch;
  const stride = nPeaks + 1;
  const radicalOk = options.polarity === 'negative';
  const coreMasses = cores.map((k) => countsMass(k.counts));
  comps.forEach((compUnits, ci) => {
    let hasC = false;
    let total = 0;
    for (let u = 0; u < nU; u++) {
      total += compUnits[u]!;
      if (compUnits[u]! > 0 && rules.cLinkable[u] === 1) hasC = true;
    }
    const subs = subMultisetsCached(compUnits, rules);
    for (let si = 0; si < subs.list.length; si++) {
      const sub = subs.list[si]!;
      const removed = sub.units;
      const lostAtoms = sub.atoms;
      const removedCount = sub.size;
      const lostMass = sub.mass;
      const ladderEnd = removedCount === total || removedCount === 0;
      // Radical Y ions (H• lost too) only on the bare aglycone, in negative mode.
      const maxRadical = radicalOk && removedCount === total ? 1 : 0;
      for (let coreIdx = 0; coreIdx < cores.length; coreIdx++) {
        const core = cores[coreIdx]!;
        const z = core.charge;
        const coreMass = coreMasses[coreIdx]!;
        // Cross-ring ions come from the precursor or from fragments that keep only C-linkable residues
        // (the C-glycosidic core after its O-linked units are gone).
        const crossHere = hasC && (removedCount === 0 || subs.keepsCOnly[si] === 1);
        const list = ladderEnd ? (crossHere ? lists.all : lists.ends) : crossHere ? lists.cross : lists.plain;
        if (list.ids.length === 0) continue;
        // Peaks that some combination could explain: atoms in [rest − heaviest loss − H, rest], ± tolerance.
        const rest = coreMass - lostMass;
        const atomsOf = atomsByCharge.get(z)!;
        const az = Math.abs(z);
        const slack =
          tolDa((rest - z * ELECTRON_MASS) / az, options.fragmentPpm, options.floorDa) * az * 1.01;
        const lowAtoms = rest - list.mass[list.mass.length - 1]! - maxRadical * H_MASS - slack;
        let lo = 0;
        let hi = nPeaks;
        while (lo < hi) {
          const m = (lo + hi) >> 1;
          if (atomsOf[m]! < lowAtoms) lo = m + 1;
          else hi = m;
        }
        let nMatch = 0;
        for (let p = lo; p < nPeaks && atomsOf[p]! <= rest + slack; p++) {
          if (p === spectrum.precursorIndex) continue;
          for (let radical = 0; radical <= maxRadical; radical++) {
            // The loss mass this peak asks of a combination, then the combinations near it.
            const need = rest - radical * H_MASS - atomsOf[p]!;
            const low = need - slack;
            let a = low <= 0 ? 0 : low >= list.bins.length ? list.mass.length : list.bins[Math.floor(low)]!;
            while (a < list.mass.length && list.mass[a]! < low) a++;
            for (let q = a; q < list.mass.length && list.mass[q]! <= need + slack; q++) {
              const k = list.ids[q]!;
              const combo = rules.lossCombos[k]!;
              if (radical && (combo.radical || combo.size > 1)) continue;
              if (coreIdx === 0 && removedCount === 0 && combo.size === 0 && !radical) continue; // the precursor itself
              if (combo.crossRing >= 0) {
                // Cross-ring cleavage needs its C-linkable residue(s) still in the fragment.
                const r1 = rules.crossRingResidue[combo.crossRing]!;
                const r2 = combo.crossRing2 >= 0 ? rules.crossRingResidue[combo.crossRing2]! : -1;
                const need1 = 1 + (r2 === r1 ? 1 : 0);
                if (compUnits[r1]! - removed[r1]! < need1) continue;
                if (r2 >= 0 && r2 !== r1 && compUnits[r2]! - removed[r2]! < 1) continue;
              }
              // The exact test: the peak within tolerance of the ion's m/z.
              const atoms = coreMass - lostMass - combo.mass - radical * H_MASS;
              const mz = (atoms - z * ELECTRON_MASS) / az;
              const tol = tolDa(mz, options.fragmentPpm, options.floorDa);
              if (peakMz[p]! < mz - tol || peakMz[p]! > mz + tol) continue;
              if (nMatch === matches.length) {
                const grown = new Int32Array(matches.length * 2);
                grown.set(matches);
                matches = grown;
                matchScratch = grown;
              }
              matches[nMatch++] = (list.pos[q]! * 2 + radical) * stride + p;
            }
          }
        }
        if (nMatch === 0) continue;
        // Into rule order (insertion sort: a handful of matches, no view to allocate).
        for (let a = 1; a < nMatch; a++) {
          const x = matches[a]!;
          let b = a - 1;
          while (b >= 0 && matches[b]! > x) {
            matches[b + 1] = matches[b]!;
            b--;
          }
          matches[b + 1] = x;
        }
        const found = matches;
        for (let m = 0; m < nMatch; m++) {
          const code = found[m]!;
          const p = code % stride;
          const radical = Math.floor(code / stride) % 2;
          const k = list.byPos[Math.floor(code / (2 * stride))]!;
          const combo = rules.lossCombos[k]!;
          let ok = true;
          for (let e = 0; e < NE; e++) {
            tmp[e] = core.counts[e]! - lostAtoms[e]! - combo.counts[e]! - (e === 1 ? radical : 0);
            if (tmp[e]! < 0) ok = false;
          }
          if (!ok) continue;
          nodeFor(p, tmp, z).derivs.push({
            comp: ci,
            removed,
            combo: k,
            radical: radical as 0 | 1,
            core: coreIdx,
          });
        }
      }
    }
    if (options.polarity === 'positive') {
      // Oxonium ions of one or two residues and acylium ions, [units + H]+; oxonium ions also − H2O.
      // Sub-multisets come smallest first: those of one or two units lead the list.
      for (let si = 0; si < subs.list.length && subs.list[si]!.size <= 2; si++) {
        const part = subs.list[si]!.units;
        const n = subs.list[si]!.size;
        if (n === 0) continue;
        let cation = true;
        let acyls = 0;
        for (let u = 0; u < nU; u++) {
          if (!part[u]) continue;
          if (!units[u]!.cation) cation = false;
          if (units[u]!.kind === 'acyl') acyls += part[u]!;
        }
        if (!cation || (acyls > 0 && n > 1)) continue;
        for (let e = 0; e < NE; e++) tmp[e] = subs.list[si]!.atoms[e]!;
        tmp[1]! += 1;
        for (let water = 0; water <= (acyls > 0 ? 0 : 1); water++) {
          if (water) {
            tmp[1]! -= 2;
            tmp[3]! -= 1;
          }
          peaksNear(countsMass(tmp), 1, (p) => {
            nodeFor(p, tmp, 1).cations.push({ comp: ci, units: part, water: water as 0 | 1 });
          });
        }
      }
    }
  });

  return { hypothesis: h, nodes: [rootNode, ...found], compositions: comps, cores };
}

/** Second phase of {@link buildHypothesisGraph}: decomposition-only nodes, order, colours and edges. */
export function finishGraph(
  m: MatchedHypothesis,
  spectrum: CleanSpectrum,
  rules: CompiledRuleSet,
  options: GraphOptions,
): HypothesisGraph {
  const w = rules.rules.scoring;
  const { hypothesis: h, cores, compositions: comps } = m;
  const nodes = m.nodes.slice();
  const nPeaks = spectrum.mz.length;
  let base = 0;
  for (let i = 0; i < nPeaks; i++) base = Math.max(base, spectrum.intensity[i]!);
  const explained = new Uint8Array(nPeaks);
  for (let i = 1; i < nodes.length; i++) explained[nodes[i]!.peak] = 1;
  const rootMz = h.mz;
  for (let p = 0; p < nPeaks; p++) {
    if (p === spectrum.precursorIndex || explained[p]) continue;
    const mz = spectrum.mz[p]!;
    if (spectrum.intensity[p]! < options.genericMinRelative * base || options.genericPerPeak <= 0) continue;
    if (mz > rootMz + tolDa(mz, options.fragmentPpm, options.floorDa) && Math.abs(h.charge) === 1) continue;
    // No rule explains this peak: sub-formulas of the precursor (or of the charge-reduced core).
    for (const core of cores) {
      if (core.charge !== h.charge && Math.abs(h.charge) === 1) continue;
      const z = core.charge;
      const list: FragNode[] = [];
      rules.precursorDecomposer.forEach(
        mz,
        { ppm: options.fragmentPpm, floorDa: options.floorDa },
        (c, atoms) => {
          if (countsRdbe(c) < -0.5) return;
          const theo = (atoms - z * ELECTRON_MASS) / Math.abs(z);
          list.push({
            peak: p,
            counts: Int32Array.from(c),
            charge: z,
            mz: theo,
            ppm: ((mz - theo) / theo) * 1e6,
            derivs: [],
            cations: [],
            generic: true,
          });
        },
        { charge: z, maxCounts: core.counts },
      );
      list.sort((a, b) => Math.abs(a.ppm) - Math.abs(b.ppm));
      for (const n of list.slice(0, options.genericPerPeak)) nodes.push(n);
    }
  }

  // Topological order: heavier ions (by atoms) first; the root stays first.
  const atomMass: number[] = new Array(nodes.length).fill(0);
  for (let i = 1; i < nodes.length; i++) atomMass[i] = countsMass(nodes[i]!.counts);
  const byMass = Array.from({ length: nodes.length - 1 }, (_, i) => i + 1).sort(
    (a, b) => atomMass[b]! - atomMass[a]!,
  );
  const rest = byMass.map((i) => nodes[i]!);
  const ordered = [nodes[0]!, ...rest];
  const colourOf = new Map<number, number>();
  const colour = ordered.map((n, i) => {
    if (i === 0) return 0;
    let c = colourOf.get(n.peak);
    if (c === undefined) {
      c = colourOf.size + 1;
      colourOf.set(n.peak, c);
    }
    return c;
  });
  // The precursor peak, when present, is the root's colour.
  if (spectrum.precursorIndex >= 0 && colourOf.has(spectrum.precursorIndex)) {
    const pc = colourOf.get(spectrum.precursorIndex)!;
    for (let i = 1; i < colour.length; i++) if (colour[i] === pc) colour[i] = 0;
  }

  // Edges come out child by child, parents ascending: already the CSR order of incoming edges.
  const n = ordered.length;
  const inStart: number[] = new Array(n + 1).fill(0);
  const inFrom: number[] = [];
  const inWeight: number[] = [];
  const edgeKind: LossKind[] = [];
  for (let v = 1; v < n; v++) {
    inStart[v] = inFrom.length;
    const child = ordered[v]!;
    const nodeScore = nodeTerm(child, spectrum, base, options, w.intensity, w.massError);
    for (let u = 0; u < v; u++) {
      const parent = ordered[u]!;
      if (colour[u] === colour[v]) continue;
      const best = edgePrior(parent, child, u === 0, rules, w);
      if (best === undefined) continue;
      inFrom.push(u);
      inWeight.push(best.prior + nodeScore);
      edgeKind.push(best.kind);
    }
  }
  inStart[n] = inFrom.length;
  let colourCount = 0;
  for (const c of colour) colourCount = Math.max(colourCount, c + 1);
  const graph: FragGraph = { nodeCount: n, colour, colourCount, inStart, inFrom, inWeight };
  return { graph, nodes: ordered, compositions: comps, edgeKind, cores };
}

function nodeTerm(
  n: FragNode,
  s: CleanSpectrum,
  base: number,
  o: GraphOptions,
  wI: number,
  wM: number,
): number {
  const rel = s.intensity[n.peak]! / (base || 1);
  const intensity = Math.log10(rel * 1000 + 1) / 3; // 0.1 (0.1 % of base) .. 1 (base peak)
  const tolPpm = Math.max(o.fragmentPpm, (o.floorDa / n.mz) * 1e6);
  const e = n.ppm / tolPpm;
  const isotope = s.isotopes[n.peak]! > 0 ? 0.2 : 0;
  return wI * intensity + wM * (1 - e * e) + isotope;
}

/** The best-scoring reading of the loss parent → child, or undefined when child is no sub-formula. */
/** The reading of one edge: its prior, kind, and the derivations it joins (none for generic losses). */
export interface EdgeReading {
  prior: number;
  kind: LossKind;
  from?: Derivation;
  to?: Derivation;
}

/** The best-scoring reading of the loss parent → child, or undefined when child is no sub-formula. */
export function edgePrior(
  parent: FragNode,
  child: FragNode,
  fromRoot: boolean,
  rules: CompiledRuleSet,
  w: CompiledRuleSet['rules']['scoring'],
): EdgeReading | undefined {
  if (child.charge !== parent.charge && !(fromRoot && Math.abs(parent.charge) > 1)) return undefined;
  if (!isSubCounts(child.counts, parent.counts)) return undefined;
  // The best reading so far (the first of equal priors wins).
  let bestKind: LossKind | undefined;
  let bestPrior = Number.NEGATIVE_INFINITY;
  let bestFrom: Derivation | undefined;
  let bestTo: Derivation | undefined;
  const nCombos = rules.lossCombos.length;
  // Derivations are listed by composition (matchHypothesis adds them composition by composition): only
  // those of one composition pair up, so walk the two lists group by group.
  const pd = parent.derivs;
  const cd = child.derivs;
  let i = 0;
  let j = 0;
  while (i < pd.length && j < cd.length) {
    const comp = pd[i]!.comp;
    if (comp < cd[j]!.comp) {
      i++;
      continue;
    }
    if (cd[j]!.comp < comp) {
      j++;
      continue;
    }
    let iEnd = i;
    while (iEnd < pd.length && pd[iEnd]!.comp === comp) iEnd++;
    let jEnd = j;
    while (jEnd < cd.length && cd[jEnd]!.comp === comp) jEnd++;
    for (let a = i; a < iEnd; a++) {
      const dp = pd[a]!;
      for (let b = j; b < jEnd; b++) {
        const dc = cd[b]!;
        if (dc.core < dp.core || (dc.core !== dp.core && !fromRoot)) continue;
        if (dc.radical < dp.radical) continue;
        if (!rules.comboNested[dp.combo * nCombos + dc.combo]) continue;
        let unitsLost = 0;
        let residuesLost = 0;
        let nested = true;
        for (let u = 0; u < dc.removed.length; u++) {
          const d = dc.removed[u]! - dp.removed[u]!;
          if (d < 0) {
            nested = false;
            break;
          }
          unitsLost += d;
          residuesLost += d * rules.isResidue[u]!;
        }
        if (!nested) continue;
        const cp = rules.lossCombos[dp.combo]!;
        const cc = rules.lossCombos[dc.combo]!;
        const smallLost = cc.size - cp.size;
        const crossLost =
          (cc.crossRing >= 0 ? 1 : 0) + (cc.crossRing2 >= 0 ? 1 : 0) >
          (cp.crossRing >= 0 ? 1 : 0) + (cp.crossRing2 >= 0 ? 1 : 0);
        const adductLost = dc.core !== dp.core;
        const radicalLost = dc.radical !== dp.radical;
        if (unitsLost === 0 && smallLost === 0 && !adductLost && !radicalLost) continue;
        let prior: number;
        let kind: LossKind;
        if (unitsLost > 0) {
          kind = 'glycan';
          const acylsLost = unitsLost - residuesLost;
          prior =
            unitsLost === 1
              ? w.knownLoss
              : acylsLost === 1 && residuesLost === 1
                ? w.knownLoss - 0.5
                : w.knownLoss - 1 - 0.5 * (unitsLost - 2);
          // A sugar and a small or cross-ring loss in one step is less likely than the two steps in turn.
          prior -= 1 * smallLost;
        } else if (crossLost) {
          kind = 'cross-ring';
          prior = w.knownLoss - 0.5 - 0.5 * (smallLost - 1);
        } else if (smallLost > 0) {
          kind = 'small';
          prior = w.smallLoss - 0.5 * (smallLost - 1);
        } else if (adductLost) {
          kind = 'adduct';
          prior = w.knownLoss;
        } else {
          // H• alone from an even-electron fragment: radical aglycone ions come from the precursor's homolytic
          // glycosidic cleavage (Hvattum & Ekeberg 2003), so this reading is a weak one.
          kind = 'small';
          prior = w.smallLoss - 1;
        }
        if (adductLost && kind !== 'adduct') prior -= 0.5;
        if (radicalLost && kind !== 'adduct') prior -= 0.3;
        if (bestKind === undefined || prior > bestPrior) {
          bestKind = kind;
          bestPrior = prior;
          bestFrom = dp;
          bestTo = dc;
        }
      }
    }
    i = iEnd;
    j = jEnd;
  }
  if (fromRoot && child.cations.length > 0 && (bestKind === undefined || w.smallLoss > bestPrior)) {
    bestKind = 'cation';
    bestPrior = w.smallLoss;
    bestFrom = undefined;
    bestTo = undefined;
  }
  if (bestKind !== undefined) return { prior: bestPrior, kind: bestKind, from: bestFrom, to: bestTo };
  // No rule reading: judge the loss formula itself.
  const loss = lossScratch;
  for (let e = 0; e < NE; e++) loss[e] = parent.counts[e]! - child.counts[e]!;
  const mass = countsMass(loss);
  const r = countsRdbe(loss);
  const hasHeavy = loss[0]! + loss[2]! + loss[3]! + loss[4]! + loss[5]! > 0;
  if (!hasHeavy || r < 0 || mass > 400) return { prior: w.implausibleLoss, kind: 'implausible' };
  return { prior: w.unknownLoss, kind: 'unknown' };
}

/** Scratch of {@link edgePrior} (read before it returns). */
const lossScratch = new Int32Array(NE);
