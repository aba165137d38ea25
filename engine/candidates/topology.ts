import { countsKey } from './cache.js';
import type { Unit } from '../rules/compile.js';

/**
 * How the units of a composition are stacked: every unit instance hangs from the aglycone (-1) or from a
 * residue instance; residues bound to the aglycone are O- or C-linked; acyl groups are esters.
 */
export interface Topology {
  /** Unit index (into the rule set's units) of each instance. */
  readonly unit: readonly number[];
  /** Parent instance of each instance, -1 for the aglycone. */
  readonly parent: readonly number[];
  readonly linkage: readonly ('O' | 'C' | 'ester')[];
  /** Canonical stacking string without the aglycone, e.g. `[Hex[Pen]][Hex]` (docs/stacking-notation.md). */
  readonly notation: string;
  /** Keys ({@link removedKey}) of the unit multisets whose loss gives a Y ion of this topology. */
  readonly yLosses: KeySet;
  /** Keys of unit multisets that can leave as one oxonium (B) or acylium ion (terminal subtrees). */
  readonly bUnits: KeySet;
  /** Key of the multiset whose loss leaves the bare aglycone (every unit but C-linked residues). */
  readonly y0Loss: number;
  /** Whether some residue is C-linked (cross-ring ions expected, no loss of that residue). */
  readonly cLinked: boolean;
  /** C-linked instances per unit index. */
  readonly cCounts: Uint8Array;
}

/** A sorted set of distinct keys in a typed array: cheap to build and to probe (a topology has ≤ 2^n). */
export class KeySet implements Iterable<number> {
  constructor(
    /** Sorted, distinct in `[offset, offset + size)`. */
    readonly keys: Float64Array,
    /** Set by the owner of a reused buffer (a search's view); fixed otherwise. */
    public size: number,
    /** Where the keys start in `keys` (two sets may share one buffer). */
    readonly offset = 0,
  ) {}

  has(key: number): boolean {
    let lo = this.offset;
    let hi = this.offset + this.size - 1;
    while (lo <= hi) {
      const m = (lo + hi) >> 1;
      const k = this.keys[m]!;
      if (k === key) return true;
      if (k < key) lo = m + 1;
      else hi = m - 1;
    }
    return false;
  }

  *[Symbol.iterator](): Iterator<number> {
    for (let i = 0; i < this.size; i++) yield this.keys[this.offset + i]!;
  }
}

/** Sorts `a[0, n)` in place and moves its distinct values to the front; returns how many there are. */
function sortUnique(a: Float64Array, n: number): number {
  if (n <= 32) {
    // Insertion sort: no view to allocate, and fast for the short lists most topologies have.
    for (let i = 1; i < n; i++) {
      const x = a[i]!;
      let j = i - 1;
      while (j >= 0 && a[j]! > x) {
        a[j + 1] = a[j]!;
        j--;
      }
      a[j + 1] = x;
    }
  } else a.subarray(0, n).sort();
  let m = 0;
  for (let i = 0; i < n; i++) if (m === 0 || a[i] !== a[m - 1]) a[m++] = a[i]!;
  return m;
}

/** A number identifying a unit count vector (counts < 8 per unit). */
export function removedKey(counts: ArrayLike<number>): number {
  let k = 0;
  for (let u = counts.length - 1; u >= 0; u--) k = k * 8 + counts[u]!;
  return k;
}

interface TreeShape {
  unit: number;
  children: TreeShape[];
  text: string;
}

/** Options of {@link enumerateTopologies}. */
export interface TopologyOptions {
  /** Also produce variants with up to this many C-linked residues on the aglycone. @defaultValue 0 */
  maxCLinked?: number;
  /** Stop after this many topologies (the result then says `truncated`). @defaultValue 3000 */
  limit?: number;
}

/**
 * Every distinct topology (up to symmetry) of a composition: rooted forests of its residues on the aglycone,
 * each acyl group on one residue (or the aglycone), optionally C-linked variants of aglycone-bound residues.
 */
export function enumerateTopologies(
  composition: Uint8Array,
  units: readonly Unit[],
  options: TopologyOptions = {},
): Topology[] {
  const limit = options.limit ?? 3000;
  // Forests are built lazily and the whole enumeration stops once `limit` topologies exist.
  let budget = limit * 4;
  const residues: number[] = [];
  const acyls: number[] = [];
  composition.forEach((n, u) => {
    for (let k = 0; k < n; k++) (units[u]!.kind === 'residue' ? residues : acyls).push(u);
  });
  const name = (u: number) => units[u]!.name;
  const forestMemo = new Map<string, TreeShape[][]>();

  // Forests over a multiset of residue units (sorted array), canonical (children sorted by text).
  const forests = (ms: number[]): TreeShape[][] => {
    const key = ms.join(',');
    const hit = forestMemo.get(key);
    if (hit) return hit;
    const out: TreeShape[][] = [];
    if (budget <= 0) return out;
    if (ms.length === 0) {
      out.push([]);
    } else {
      // The tree holding the first element takes a sub-multiset containing it; the rest is a forest.
      const first = ms[0]!;
      const rest = ms.slice(1);
      const seen = new Set<string>();
      for (const sub of subMultisetsOf(rest)) {
        const treeMs = [first, ...sub].sort((a, b) => a - b);
        const others = minus(rest, sub);
        for (const t of trees(treeMs)) {
          for (const f of forests(others)) {
            const forest = [t, ...f].sort((a, b) => (a.text < b.text ? -1 : a.text > b.text ? 1 : 0));
            const text = forest.map((x) => x.text).join('');
            if (seen.has(text)) continue;
            seen.add(text);
            out.push(forest);
            if (--budget <= 0) break;
          }
        }
      }
    }
    forestMemo.set(key, out);
    return out;
  };
  const trees = (ms: number[]): TreeShape[] => {
    const out: TreeShape[] = [];
    const seen = new Set<number>();
    for (let i = 0; i < ms.length; i++) {
      const root = ms[i]!;
      if (seen.has(root)) continue;
      seen.add(root);
      const rest = ms.slice(0, i).concat(ms.slice(i + 1));
      for (const f of forests(rest)) {
        out.push({ unit: root, children: f, text: `[${name(root)}${f.map((c) => c.text).join('')}]` });
      }
    }
    return out;
  };

  const out: Topology[] = [];
  // Placed topologies seen, by shape hash (equal canonical forms hash alike; a 52-bit hash keeps distinct
  // ones apart among the few thousand one composition has).
  const seenShape = new Set<number>();
  for (const forest of forests(residues)) {
    // Flatten to instances.
    const unit: number[] = [];
    const parent: number[] = [];
    const walk = (t: TreeShape, p: number) => {
      const id = unit.length;
      unit.push(t.unit);
      parent.push(p);
      for (const c of t.children) walk(c, id);
    };
    for (const t of forest) walk(t, -1);
    const nRes = unit.length;
    // Instances: the forest's residues, then the acyl groups; the C-linkable residues on the aglycone and
    // the sets of them that may be C-linked depend on the forest only.
    const u2 = unit.concat(acyls);
    const hasher = new ShapeHasher(u2, u2.length);
    const rootRes = [...Array(nRes).keys()].filter(
      (i) => parent[i] === -1 && units[unit[i]!]!.linkages.includes('C'),
    );
    const cSets = subsetsUpTo(rootRes, Math.min(options.maxCLinked ?? 0, rootRes.length));
    const p2 = parent.concat(acyls.map(() => -1));
    // Acyl placements: each acyl on the aglycone (-1) or one residue instance (p2 rewritten in place).
    const place = (k: number) => {
      if (out.length >= limit) return;
      if (k === acyls.length) {
        for (const cSet of cSets) {
          const link = u2.map((_, i) => (i >= nRes ? 'ester' : cSet.includes(i) ? 'C' : 'O')) as Linkage[];
          const shape = hasher.hash(p2, link);
          if (seenShape.has(shape)) continue;
          seenShape.add(shape);
          // The memo's copy writes its notation when first shown.
          out.push(memoTopology(u2, p2, link, units));
        }
        return;
      }
      for (let h = -1; h < nRes; h++) {
        p2[nRes + k] = h;
        place(k + 1);
      }
    };
    place(0);
    if (out.length >= limit) break;
  }
  return packKeys(out);
}

/**
 * The same topologies with their Y and B keys in one buffer for the whole list: a cached list holds hundreds
 * of topologies, and one typed array each would be hundreds of separately allocated buffers.
 */
function packKeys(list: readonly Topology[]): Topology[] {
  let total = 0;
  for (const t of list) total += t.yLosses.size + t.bUnits.size;
  const keys = new Float64Array(total);
  let at = 0;
  return list.map((t) => {
    const y = at;
    for (const k of t.yLosses) keys[at++] = k;
    const b = at;
    for (const k of t.bUnits) keys[at++] = k;
    return new FrozenTopology(
      t.unit,
      t.parent,
      t.linkage,
      new KeySet(keys, t.yLosses.size, y),
      new KeySet(keys, t.bUnits.size, b),
      t.y0Loss,
      t.cLinked,
      t.cCounts,
      (t as FrozenTopology).units,
      undefined,
    );
  });
}

function subsetsUpTo<T>(items: T[], max: number): T[][] {
  const out: T[][] = [[]];
  const walk = (start: number, cur: T[]) => {
    if (cur.length === max) return;
    for (let i = start; i < items.length; i++) {
      const next = [...cur, items[i]!];
      out.push(next);
      walk(i + 1, next);
    }
  };
  walk(0, []);
  return out;
}

function subMultisetsOf(ms: number[]): number[][] {
  // ms is sorted; produce each distinct sub-multiset once.
  const groups: [number, number][] = [];
  for (const x of ms) {
    const last = groups[groups.length - 1];
    if (last && last[0] === x) last[1]++;
    else groups.push([x, 1]);
  }
  const out: number[][] = [];
  const walk = (g: number, cur: number[]) => {
    if (g === groups.length) {
      out.push(cur);
      return;
    }
    const [x, n] = groups[g]!;
    for (let k = 0; k <= n; k++) walk(g + 1, k === 0 ? cur : [...cur, ...Array(k).fill(x)]);
  };
  walk(0, []);
  return out;
}

function minus(ms: number[], sub: number[]): number[] {
  const out = ms.slice();
  for (const x of sub) out.splice(out.indexOf(x), 1);
  return out;
}

/** Canonical stacking text of instances (children sorted), without the aglycone name. */
export function canonical(
  unit: readonly number[],
  parent: readonly number[],
  linkage: readonly ('O' | 'C' | 'ester')[],
  units: readonly Unit[],
): string {
  const kids: number[][] = unit.map(() => []);
  const roots: number[] = [];
  parent.forEach((p, i) => {
    (p < 0 ? roots : kids[p]!).push(i);
  });
  const text = (i: number): string => {
    const inner = kids[i]!.map(text).sort().join('');
    return `[${linkage[i] === 'C' ? 'C-' : ''}${units[unit[i]!]!.name}${inner}]`;
  };
  return roots.map(text).sort().join('');
}

/** Options of {@link searchTopologies}. */
export interface SearchOptions {
  /** Residues on the aglycone that may be C-linked. @defaultValue 0 */
  maxCLinked?: number;
  /** Improvement rounds per start. @defaultValue 5 */
  maxRounds?: number;
}

/**
 * Scores a topology. During a search the topology is a view rewritten at every step: valid for the call
 * only; `keep()` returns a copy that stays valid (built only for topologies worth keeping).
 */
export type TopologyScorer = (t: Topology, keep: () => Topology) => number;

/**
 * Local search over topologies of a composition too large to enumerate: from a chain and from a star,
 * repeatedly re-hangs one unit (or flips an aglycone-bound residue between O and C) while the score rises.
 * Calls `score` once for every distinct topology it visits.
 */
export function searchTopologies(
  composition: Uint8Array,
  units: readonly Unit[],
  score: TopologyScorer,
  options: SearchOptions = {},
): void {
  const unit: number[] = [];
  composition.forEach((n, u) => {
    if (units[u]!.kind === 'residue') for (let k = 0; k < n; k++) unit.push(u);
  });
  const nRes = unit.length;
  composition.forEach((n, u) => {
    if (units[u]!.kind === 'acyl') for (let k = 0; k < n; k++) unit.push(u);
  });
  const n = unit.length;
  const maxC = options.maxCLinked ?? 0;
  // One predictor per instance and unit count, reused by every search (its buffers are rewritten).
  const poolKey = n * 1024 + composition.length;
  let predictor = searchPredictors.get(poolKey);
  if (!predictor) {
    predictor = new Predictor(n, composition.length);
    searchPredictors.set(poolKey, predictor);
  }
  predictor.setUnits(unit);
  const hasher = new ShapeHasher(unit, n);
  // Distinct topologies by their shape hash (a 52-bit hash of the canonical form: collisions are negligible
  // among the few hundred topologies one search visits).
  const visited = new Map<number, number>();
  const view = predictor.view(units);
  const keep = () => predictor.freeze(units);
  const evaluate = (parent: number[], linkage: Linkage[]): number => {
    const h = hasher.hash(parent, linkage);
    const hit = visited.get(h);
    if (hit !== undefined) return hit;
    predictor.predict(parent, linkage);
    const s = score(view, keep);
    visited.set(h, s);
    return s;
  };
  const createsCycle = (parent: number[], i: number, p: number): boolean => {
    for (let j = p; j >= 0; j = parent[j]!) if (j === i) return true;
    return false;
  };
  const chain = unit.map((_, i) => (i === 0 || i >= nRes ? (i >= nRes ? Math.max(0, nRes - 1) : -1) : i - 1));
  const star = unit.map((_, i) => (i < nRes ? -1 : 0));
  if (nRes === 0) {
    chain.fill(-1);
    star.fill(-1);
  }
  const baseLink = unit.map((_, i) => (i < nRes ? 'O' : 'ester') as Linkage);
  // Two starts for mid-sized compositions; the chain alone (the commonest shape) beyond six units.
  for (const start of n > 5 ? [chain] : [chain, star]) {
    // Moves are tried in place on `parent` / `linkage` and undone; the best one is then applied.
    const parent = start.slice();
    const linkage = baseLink.slice();
    let current = evaluate(parent, linkage);
    let cCount = 0;
    for (let round = 0; round < (options.maxRounds ?? 5); round++) {
      let bestScore = current;
      let bestI = -1;
      let bestP = 0;
      let bestFlip = false;
      for (let i = 0; i < n; i++) {
        const p0 = parent[i]!;
        const l0 = linkage[i]!;
        for (let p = -1; p < nRes; p++) {
          if (p === i || p === p0 || (p >= 0 && createsCycle(parent, i, p))) continue;
          parent[i] = p;
          if (i < nRes && p >= 0) linkage[i] = 'O'; // a residue on another residue is O-linked
          const s = evaluate(parent, linkage);
          parent[i] = p0;
          linkage[i] = l0;
          if (s > bestScore + 1e-9) {
            bestScore = s;
            bestI = i;
            bestP = p;
            bestFlip = false;
          }
        }
        // O ↔ C on a residue bound to the aglycone.
        if (i < nRes && p0 === -1 && units[unit[i]!]!.linkages.includes('C')) {
          const flipped: Linkage = l0 === 'C' ? 'O' : 'C';
          if (flipped === 'O' || cCount + 1 <= maxC) {
            linkage[i] = flipped;
            const s = evaluate(parent, linkage);
            linkage[i] = l0;
            if (s > bestScore + 1e-9) {
              bestScore = s;
              bestI = i;
              bestFlip = true;
            }
          }
        }
      }
      if (bestI < 0) break;
      if (bestFlip) {
        linkage[bestI] = linkage[bestI] === 'C' ? 'O' : 'C';
      } else {
        parent[bestI] = bestP;
        if (bestI < nRes && bestP >= 0) linkage[bestI] = 'O';
      }
      cCount = linkage.reduce((a, l) => a + (l === 'C' ? 1 : 0), 0);
      current = bestScore;
    }
  }
}

type Linkage = 'O' | 'C' | 'ester';

/** 32-bit mix (murmur3 finaliser). */
function mix32(x: number): number {
  let h = x | 0;
  h = Math.imul(h ^ (h >>> 16), 0x85ebca6b);
  h = Math.imul(h ^ (h >>> 13), 0xc2b2ae35);
  return (h ^ (h >>> 16)) >>> 0;
}

/**
 * Hashes a topology's shape up to symmetry: each instance's code mixes its unit and linkage with the sum of
 * its children's mixed codes (a sum is blind to the children's order), in two independent 32-bit lanes.
 */
class ShapeHasher {
  readonly #symbol: Int32Array;
  readonly #lo: Uint32Array;
  readonly #hi: Uint32Array;
  readonly #order: Int32Array;
  readonly #depth: Int32Array;

  constructor(
    unit: readonly number[],
    readonly n: number,
  ) {
    this.#symbol = Int32Array.from(unit, (u) => u * 4 + 1);
    this.#lo = new Uint32Array(n);
    this.#hi = new Uint32Array(n);
    this.#order = new Int32Array(n);
    this.#depth = new Int32Array(n);
  }

  hash(parent: readonly number[], linkage: readonly Linkage[]): number {
    const n = this.n;
    const lo = this.#lo;
    const hi = this.#hi;
    const order = this.#order;
    // Deepest instances first, so each child is finished before its parent.
    const depth = this.#depth;
    for (let i = 0; i < n; i++) {
      let d = 0;
      for (let j = parent[i]!; j >= 0; j = parent[j]!) d++;
      depth[i] = d;
    }
    let m = 0;
    for (let d = n; d >= 0; d--) for (let i = 0; i < n; i++) if (depth[i] === d) order[m++] = i;
    lo.fill(0);
    hi.fill(0);
    let rootLo = 0;
    let rootHi = 0;
    for (let k = 0; k < n; k++) {
      const i = order[k]!;
      const sym = this.#symbol[i]! + (linkage[i] === 'C' ? 1 : 0);
      const a = mix32(mix32(sym * 0x9e3779b1) + lo[i]!);
      const b = mix32(mix32(sym ^ 0x5bd1e995) ^ mix32(hi[i]! + 0x27d4eb2f));
      const p = parent[i]!;
      if (p >= 0) {
        lo[p] = (lo[p]! + mix32(a + 0x165667b1)) >>> 0;
        hi[p] = (hi[p]! + mix32(b ^ 0x61c88647)) >>> 0;
      } else {
        rootLo = (rootLo + mix32(a + 0x165667b1)) >>> 0;
        rootHi = (rootHi + mix32(b ^ 0x61c88647)) >>> 0;
      }
    }
    return (rootHi >>> 11) * 0x100000000 + rootLo;
  }
}

const EMPTY_KEYS = new Float64Array(0);

/** Keys per block of frozen topologies' keys (8 KB). */
const KEY_BLOCK = 1024;

/**
 * Computes a topology's predictions (Y losses, B units, Y0 loss, C-links) into reusable buffers, for a fixed
 * list of unit instances; {@link Predictor.freeze} copies the current one into a standalone {@link Topology}.
 */
class Predictor {
  /** The block frozen topologies' keys are written to, and how much of it is taken. */
  #block: Float64Array = EMPTY_KEYS;
  #blockUsed = 0;
  readonly #weight: Float64Array;
  #total = 0;
  readonly #order: Int32Array;
  readonly #depth: Int32Array;
  #fixedMask = 0;
  #ny = 0;
  readonly #yKeys: Float64Array;
  readonly #bKeys: Float64Array;
  readonly #subtree: Float64Array;
  readonly #cCounts: Uint8Array;
  #unit: readonly number[] = [];
  #parent: readonly number[] = [];
  #linkage: readonly Linkage[] = [];
  #ySize = 0;
  #bSize = 0;
  #y0Loss = 0;
  #cLinked = false;
  #view: TopologyView | undefined;

  constructor(
    /** Instances per topology. */
    readonly n: number,
    /** Units in the rule set. */
    readonly nUnits: number,
  ) {
    this.#weight = new Float64Array(n);
    this.#order = new Int32Array(n);
    this.#depth = new Int32Array(n);
    this.#yKeys = new Float64Array(1 << n);
    this.#bKeys = new Float64Array(n);
    this.#subtree = new Float64Array(n);
    this.#cCounts = new Uint8Array(nUnits);
  }

  /** Sets the unit of each instance (for every following prediction); returns this. */
  setUnits(unit: readonly number[]): this {
    this.#unit = unit;
    // A Y-loss key is Σ 8^unit over the lost instances (removedKey of their counts): sum weights directly.
    let total = 0;
    for (let i = 0; i < this.n; i++) {
      this.#weight[i] = 8 ** unit[i]!;
      total += this.#weight[i]!;
    }
    this.#total = total;
    return this;
  }

  get unit(): readonly number[] {
    return this.#unit;
  }

  predict(parent: readonly number[], linkage: readonly Linkage[]): void {
    const n = this.n;
    const weight = this.#weight;
    this.#parent = parent;
    this.#linkage = linkage;
    // Retained sets: closed towards the aglycone (each kept instance's parent kept), holding every C-linked
    // residue. Enumerated depth-first over the instances, parents before children: a chain has n + 1 such
    // sets, so this visits far fewer than the 2^n subsets.
    let fixedMask = 0;
    this.#cCounts.fill(0);
    for (let i = 0; i < n; i++) {
      if (linkage[i] === 'C' && parent[i] === -1) {
        fixedMask |= 1 << i;
        this.#cCounts[this.#unit[i]!]!++;
      }
    }
    const order = this.#order;
    let m = 0;
    const depth = this.#depth;
    let maxDepth = 0;
    for (let i = 0; i < n; i++) {
      let d = 0;
      for (let j = parent[i]!; j >= 0; j = parent[j]!) d++;
      depth[i] = d;
      if (d > maxDepth) maxDepth = d;
    }
    for (let d = 0; d <= maxDepth; d++) for (let i = 0; i < n; i++) if (depth[i] === d) order[m++] = i;
    this.#fixedMask = fixedMask;
    this.#ny = 0;
    this.#ideals(0, 0, 0);
    const ny = this.#ny;
    this.#ySize = sortUnique(this.#yKeys, ny);
    // Terminal subtrees (an instance with all its descendants) leave as B / acylium ions.
    const subtree = this.#subtree;
    subtree.fill(0);
    for (let i = 0; i < n; i++) for (let j = i; j >= 0; j = parent[j]!) subtree[j]! += weight[i]!;
    let nb = 0;
    let y0Loss = 0;
    for (let i = 0; i < n; i++) {
      if ((fixedMask >> i) & 1) continue;
      this.#bKeys[nb++] = subtree[i]!;
      y0Loss += weight[i]!;
    }
    this.#bSize = sortUnique(this.#bKeys, nb);
    this.#y0Loss = y0Loss;
    this.#cLinked = fixedMask !== 0;
    const v = this.#view;
    if (v) {
      v.parent = parent;
      v.linkage = linkage;
      v.yLosses.size = this.#ySize;
      v.bUnits.size = this.#bSize;
      v.y0Loss = y0Loss;
      v.cLinked = fixedMask !== 0;
    }
  }

  /** Depth-first enumeration of the retained sets from instance `order[k]` on (see {@link predict}). */
  #ideals(k: number, kept: number, inMask: number): void {
    if (k === this.n) {
      this.#yKeys[this.#ny++] = this.#total - kept;
      return;
    }
    const i = this.#order[k]!;
    const p = this.#parent[i]!;
    if (p < 0 || (inMask >> p) & 1) this.#ideals(k + 1, kept + this.#weight[i]!, inMask | (1 << i));
    if (!((this.#fixedMask >> i) & 1)) this.#ideals(k + 1, kept, inMask);
  }

  /** A view of the current prediction (rewritten by the next {@link Predictor.predict}). */
  view(units: readonly Unit[]): Topology {
    this.#view ??= new TopologyView(this.#unit, this.#yKeys, this.#bKeys, this.#cCounts, units);
    // A pooled predictor serves compositions (and rule sets) in turn: the view follows the current ones.
    this.#view.unit = this.#unit;
    this.#view.units = units;
    return this.#view;
  }

  /** A standalone copy of the current prediction (its notation is written when first read). */
  freeze(units: readonly Unit[], notation?: string, share = false): Topology {
    // Y and B keys side by side in the predictor's current block (a typed array above 64 bytes is allocated
    // outside the JS heap, slowly: one block serves many frozen topologies); with `share`, instance lists,
    // linkages and C counts are shared with every equal one (memos hold thousands of topologies, most of them
    // alike in these).
    const ny = this.#ySize;
    const nb = this.#bSize;
    if (this.#blockUsed + ny + nb > this.#block.length) {
      this.#block = new Float64Array(Math.max(KEY_BLOCK, ny + nb));
      this.#blockUsed = 0;
    }
    const keys = this.#block;
    const at = this.#blockUsed;
    for (let i = 0; i < ny; i++) keys[at + i] = this.#yKeys[i]!;
    for (let i = 0; i < nb; i++) keys[at + ny + i] = this.#bKeys[i]!;
    this.#blockUsed = at + ny + nb;
    return new FrozenTopology(
      share ? intern(this.unit, 1) : this.unit.slice(),
      share ? intern(this.#parent, 2) : this.#parent.slice(),
      share ? intern(this.#linkage, 3) : this.#linkage.slice(),
      new KeySet(keys, ny, at),
      new KeySet(keys, nb, at + ny),
      this.#y0Loss,
      this.#cLinked,
      share ? internBytes(this.#cCounts) : this.#cCounts.slice(),
      units,
      notation,
    );
  }
}

/** Shared read-only arrays by content (bounded: cleared past a size no rule set reaches in practice). */
const internedLists = new Map<number | string, readonly (number | string)[]>();
const internedBytes = new Map<number | string, Uint8Array>();

/** Digit of a list entry for {@link listKey}: unit indices and parents (≥ −1) shifted up, linkages coded. */
function digit(x: number | string): number {
  return typeof x === 'number' ? x + 2 : x === 'O' ? 1 : x === 'C' ? 2 : 3;
}

/**
 * A key for a short list of small entries: a number (base-16 digits, none zero, so lengths differ) when every
 * digit is below 16 and the list fits 13 digits, else its text. Kind tags keep unit, parent and linkage lists
 * apart.
 */
function listKey(list: ArrayLike<number | string>, kind: number): number | string {
  if (list.length <= 12) {
    let k = kind;
    for (let i = 0; i < list.length; i++) {
      const d = digit(list[i]!);
      if (d >= 16) return `${kind}:${Array.prototype.join.call(list, ',')}`;
      k = k * 16 + d;
    }
    return k;
  }
  return `${kind}:${Array.prototype.join.call(list, ',')}`;
}

function intern<T extends number | string>(list: readonly T[], kind: number): readonly T[] {
  const key = listKey(list, kind);
  const hit = internedLists.get(key);
  if (hit) return hit as readonly T[];
  if (internedLists.size > 100_000) internedLists.clear();
  const copy = list.slice();
  internedLists.set(key, copy);
  return copy;
}

function internBytes(a: Uint8Array): Uint8Array {
  const key = countsKey(a);
  const hit = internedBytes.get(key);
  if (hit) return hit;
  if (internedBytes.size > 100_000) internedBytes.clear();
  const copy = a.slice();
  internedBytes.set(key, copy);
  return copy;
}

/** A topology that owns its data; the canonical notation is built on first use (most are never shown). */
class FrozenTopology implements Topology {
  #notation: string | undefined;

  constructor(
    readonly unit: readonly number[],
    readonly parent: readonly number[],
    readonly linkage: readonly Linkage[],
    readonly yLosses: KeySet,
    readonly bUnits: KeySet,
    readonly y0Loss: number,
    readonly cLinked: boolean,
    readonly cCounts: Uint8Array,
    readonly units: readonly Unit[],
    notation: string | undefined,
  ) {
    this.#notation = notation;
  }

  get notation(): string {
    this.#notation ??= canonical(this.unit, this.parent, this.linkage, this.units);
    return this.#notation;
  }
}

/** The current prediction of a {@link Predictor}, as a {@link Topology} (valid until its next prediction). */
class TopologyView implements Topology {
  parent: readonly number[] = [];
  linkage: readonly Linkage[] = [];
  readonly yLosses: KeySet;
  readonly bUnits: KeySet;
  y0Loss = 0;
  cLinked = false;

  /** Reads the predictor's buffers; {@link Predictor.predict} sets the rest. */
  constructor(
    public unit: readonly number[],
    yKeys: Float64Array,
    bKeys: Float64Array,
    readonly cCounts: Uint8Array,
    public units: readonly Unit[],
  ) {
    this.yLosses = new KeySet(yKeys, 0);
    this.bUnits = new KeySet(bKeys, 0);
  }

  get notation(): string {
    return canonical(this.unit, this.parent, this.linkage, this.units);
  }
}

/** Predictors of {@link searchTopologies}, by instance and unit count (a search is never nested in another). */
const searchPredictors = new Map<number, Predictor>();

/** Scratch predictors of {@link makeTopology}, by instance and unit count (never held across calls). */
const predictors = new Map<number, Predictor>();

/** Builds a topology's predictions (Y losses, B units) from its instances. */
export function makeTopology(
  unit: number[],
  parent: number[],
  linkage: Linkage[],
  notation: string,
  nUnits: number,
): Topology {
  const key = unit.length * 1024 + nUnits;
  let p = predictors.get(key);
  if (!p) {
    p = new Predictor(unit.length, nUnits);
    predictors.set(key, p);
  }
  p.setUnits(unit).predict(parent, linkage);
  // Built for the memos: arrays equal to those of other topologies are shared.
  return p.freeze([], notation, true);
}

/** A topology for the memos: shared arrays, notation written on first use (most are never shown). */
function memoTopology(
  unit: number[],
  parent: number[],
  linkage: Linkage[],
  units: readonly Unit[],
): Topology {
  const key = unit.length * 1024 + units.length;
  let p = predictors.get(key);
  if (!p) {
    p = new Predictor(unit.length, units.length);
    predictors.set(key, p);
  }
  p.setUnits(unit).predict(parent, linkage);
  return p.freeze(units, undefined, true);
}
