import type { FragGraph, TreeSolution } from './graph.js';
import { solveGreedy } from './greedy.js';

/** Working arrays of {@link solveExact}, grown as graphs need (a search is never nested in another). */
const work = {
  maxIn: new Float64Array(64),
  parent: new Int32Array(64),
  suffix: new Float64Array(1024),
  used: new Uint8Array(64),
};

/** Options of {@link solveExact}. */
export interface ExactOptions {
  /** Give up (and return the best tree found, marked not exact) after this many search nodes. @defaultValue 20000 */
  maxSteps?: number;
}

/**
 * Exact maximum colorful subtree by branch and bound.
 *
 * Nodes are decided in index (topological) order: left out, or kept under the best edge from a node already
 * kept — given the kept set, each node's best parent is independent of the others, so this search is
 * complete. The bound adds, for every colour still free, the best positive incoming edge any later node of
 * that colour has. The greedy tree seeds the incumbent, so the typical rule-constrained graph (nearly a
 * chain, few colour conflicts) is proven optimal after one descent.
 */
export function solveExact(g: FragGraph, options: ExactOptions = {}): TreeSolution {
  const maxSteps = options.maxSteps ?? 20_000;
  const n = g.nodeCount;
  const C = g.colourCount;
  const seed = solveGreedy(g);
  let bestScore = seed.score;
  // The greedy tree is this call's own: it seeds the incumbent as it is.
  let bestParent = seed.parent;

  // Working arrays are scratch buffers reused from call to call (typed arrays above 64 bytes are allocated
  // outside the JS heap, slowly).
  if (work.maxIn.length < n) {
    work.maxIn = new Float64Array(2 * n);
    work.parent = new Int32Array(2 * n);
  }
  if (work.suffix.length < (n + 1) * C) work.suffix = new Float64Array(2 * (n + 1) * C);
  if (work.used.length < C) work.used = new Uint8Array(2 * C);
  // maxIn[v]: best incoming edge of v regardless of which parents are kept (≥ 0 for the bound).
  const maxIn = work.maxIn;
  maxIn[0] = 0;
  for (let v = 1; v < n; v++) {
    let w = 0;
    for (let k = g.inStart[v]!; k < g.inStart[v + 1]!; k++) if (g.inWeight[k]! > w) w = g.inWeight[k]!;
    maxIn[v] = w;
  }
  // suffix[k*C + c]: best maxIn among nodes ≥ k of colour c.
  const suffix = work.suffix;
  suffix.fill(0, 0, (n + 1) * C);
  for (let k = n - 1; k >= 1; k--) {
    suffix.copyWithin(k * C, (k + 1) * C, (k + 2) * C);
    const c = g.colour[k]!;
    if (maxIn[k]! > suffix[k * C + c]!) suffix[k * C + c] = maxIn[k]!;
  }

  const parent = work.parent;
  parent.fill(-1, 0, n);
  parent[0] = 0;
  const used = work.used;
  used.fill(0, 0, C);
  used[g.colour[0]!] = 1;
  let steps = 0;
  let aborted = false;
  const eps = 1e-9;

  const bound = (k: number): number => {
    let b = 0;
    const off = k * C;
    for (let c = 0; c < C; c++) if (!used[c]) b += suffix[off + c]!;
    return b;
  };

  const search = (k: number, score: number): void => {
    if (aborted) return;
    if (++steps > maxSteps) {
      aborted = true;
      return;
    }
    if (k === n) {
      if (score > bestScore + eps) {
        bestScore = score;
        bestParent = parent.slice(0, n);
      }
      return;
    }
    if (score + bound(k) <= bestScore + eps) return;
    const c = g.colour[k]!;
    if (!used[c]) {
      let w = Number.NEGATIVE_INFINITY;
      let p = -1;
      for (let e = g.inStart[k]!; e < g.inStart[k + 1]!; e++) {
        const u = g.inFrom[e]!;
        if (parent[u]! >= 0 && g.inWeight[e]! > w) {
          w = g.inWeight[e]!;
          p = u;
        }
      }
      if (p >= 0) {
        parent[k] = p;
        used[c] = 1;
        search(k + 1, score + w);
        used[c] = 0;
        parent[k] = -1;
      }
    }
    search(k + 1, score);
  };
  search(1, 0);
  return { parent: bestParent, score: bestScore, exact: !aborted, steps };
}
