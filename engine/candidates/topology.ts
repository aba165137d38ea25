import type { LruCache } from './cache.js';
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
  readonly yLosses: ReadonlySet<number>;
  /** Keys of unit multisets that can leave as one oxonium (B) or acylium ion (terminal subtrees). */
  readonly bUnits: ReadonlySet<number>;
  /** Key of the multiset whose loss leaves the bare aglycone (every unit but C-linked residues). */
  readonly y0Loss: number;
  /** Whether some residue is C-linked (cross-ring ions expected, no loss of that residue). */
  readonly cLinked: boolean;
  /** C-linked instances per unit index. */
  readonly cCounts: Uint8Array;
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
  const seenText = new Set<string>();
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
    // Acyl placements: each acyl on the aglycone (-1) or one residue instance.
    const place = (k: number, hosts: number[]) => {
      if (out.length >= limit) return;
      if (k === acyls.length) {
        const u2 = unit.concat(acyls);
        const p2 = parent.concat(hosts);
        const rootRes = [...Array(nRes).keys()].filter(
          (i) => parent[i] === -1 && units[unit[i]!]!.linkages.includes('C'),
        );
        const maxC = Math.min(options.maxCLinked ?? 0, rootRes.length);
        for (const cSet of subsetsUpTo(rootRes, maxC)) {
          const link = u2.map((_, i) => (i >= nRes ? 'ester' : cSet.includes(i) ? 'C' : 'O')) as (
            | 'O'
            | 'C'
            | 'ester'
          )[];
          const notation = canonical(u2, p2, link, units);
          if (seenText.has(notation)) continue;
          seenText.add(notation);
          out.push(makeTopology(u2, p2, link, notation, composition.length));
        }
        return;
      }
      for (let h = -1; h < nRes; h++) place(k + 1, [...hosts, h]);
    };
    place(0, []);
    if (out.length >= limit) break;
  }
  return out;
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
  /** Topologies already built, by composition and notation (shared across calls). */
  cache?: LruCache<string, Topology>;
}

/**
 * Local search over topologies of a composition too large to enumerate: from a chain and from a star,
 * repeatedly re-hangs one unit (or flips an aglycone-bound residue between O and C) while the score rises.
 * Calls `score` for every topology it visits.
 */
export function searchTopologies(
  composition: Uint8Array,
  units: readonly Unit[],
  score: (t: Topology) => number,
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
  const visited = new Map<string, number>();
  const compositionKey = composition.join(',');
  const evaluate = (parent: number[], linkage: ('O' | 'C' | 'ester')[]): number => {
    const notation = canonical(unit, parent, linkage, units);
    const hit = visited.get(notation);
    if (hit !== undefined) return hit;
    // Topologies depend on the composition only: share them across spectra.
    const cacheKey = `${compositionKey}|${notation}`;
    let topo = options.cache?.get(cacheKey);
    if (!topo) {
      topo = makeTopology(unit.slice(), parent.slice(), linkage.slice(), notation, composition.length);
      options.cache?.set(cacheKey, topo);
    }
    const s = score(topo);
    visited.set(notation, s);
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
  const baseLink = unit.map((_, i) => (i < nRes ? 'O' : 'ester') as 'O' | 'C' | 'ester');
  // Two starts for mid-sized compositions; the chain alone (the commonest shape) beyond six units.
  for (const start of n > 5 ? [chain] : [chain, star]) {
    let parent = start.slice();
    let linkage = baseLink.slice();
    let current = evaluate(parent, linkage);
    for (let round = 0; round < (options.maxRounds ?? 5); round++) {
      let bestScore = current;
      let bestParent: number[] | undefined;
      let bestLink: ('O' | 'C' | 'ester')[] | undefined;
      for (let i = 0; i < n; i++) {
        for (let p = -1; p < nRes; p++) {
          if (p === i || p === parent[i] || (p >= 0 && createsCycle(parent, i, p))) continue;
          const next = parent.slice();
          next[i] = p;
          const link = linkage.slice();
          if (i < nRes && p >= 0) link[i] = 'O';
          const s = evaluate(next, link);
          if (s > bestScore + 1e-9) {
            bestScore = s;
            bestParent = next;
            bestLink = link;
          }
        }
        // O ↔ C on a residue bound to the aglycone.
        if (i < nRes && parent[i] === -1 && units[unit[i]!]!.linkages.includes('C')) {
          const link = linkage.slice();
          link[i] = link[i] === 'C' ? 'O' : 'C';
          if (link.filter((l) => l === 'C').length <= maxC) {
            const s = evaluate(parent, link);
            if (s > bestScore + 1e-9) {
              bestScore = s;
              bestParent = parent.slice();
              bestLink = link;
            }
          }
        }
      }
      if (!bestParent || !bestLink) break;
      parent = bestParent;
      linkage = bestLink;
      current = bestScore;
    }
  }
}

/** Builds a topology's predictions (Y losses, B units) from its instances. */
export function makeTopology(
  unit: number[],
  parent: number[],
  linkage: ('O' | 'C' | 'ester')[],
  notation: string,
  nUnits: number,
): Topology {
  const n = unit.length;
  const yLosses = new Set<number>();
  const bUnits = new Set<number>();
  // A Y-loss key is Σ 8^unit over the lost instances (removedKey of their counts): sum weights directly.
  const weight = unit.map((u) => 8 ** u);
  const total = weight.reduce((a, b) => a + b, 0);
  // Retained sets: closed towards the aglycone, holding every C-linked residue.
  let fixedMask = 0;
  const cCounts = new Uint8Array(nUnits);
  for (let i = 0; i < n; i++) {
    if (linkage[i] === 'C' && parent[i] === -1) {
      fixedMask |= 1 << i;
      cCounts[unit[i]!]!++;
    }
  }
  for (let mask = 0; mask < 1 << n; mask++) {
    if ((mask & fixedMask) !== fixedMask) continue;
    let ok = true;
    let kept = 0;
    for (let i = 0; i < n; i++) {
      if (!((mask >> i) & 1)) continue;
      const p = parent[i]!;
      if (p >= 0 && !((mask >> p) & 1)) {
        ok = false;
        break;
      }
      kept += weight[i]!;
    }
    if (ok) yLosses.add(total - kept);
  }
  // Terminal subtrees (a unit with all its descendants) leave as B / acylium ions.
  // Each instance's weight is added to itself and every ancestor: subtree[i] is its subtree's key.
  const subtree = new Float64Array(n);
  const add = (i: number, w: number) => {
    for (let j = i; j >= 0; j = parent[j]!) subtree[j]! += w;
  };
  for (let i = 0; i < n; i++) add(i, weight[i]!);
  let y0Loss = 0;
  for (let i = 0; i < n; i++) {
    if ((fixedMask >> i) & 1) continue;
    bUnits.add(subtree[i]!);
    y0Loss += weight[i]!;
  }
  return { unit, parent, linkage, notation, yLosses, bUnits, y0Loss, cLinked: fixedMask !== 0, cCounts };
}
