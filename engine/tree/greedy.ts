import type { FragGraph, TreeSolution } from './graph.js';

/**
 * Greedy heuristic (after Böcker & Rasche 2008; Rauf et al. 2013): repeatedly attach the node whose best edge
 * from the current tree weighs most, skipping used colours, while that weight is positive; then try to insert
 * left-out nodes whose positive children would pay for a negative edge. Fast, not proven optimal.
 */
export function solveGreedy(g: FragGraph): TreeSolution {
  const n = g.nodeCount;
  const parent = new Int32Array(n).fill(-1);
  parent[0] = 0;
  // Working arrays are scratch buffers reused from call to call (typed arrays above 64 bytes are allocated
  // outside the JS heap, slowly); only `parent` is returned.
  const s = scratch.fit(n, g.colourCount, g.inFrom.length);
  const used = s.used;
  used.fill(0, 0, g.colourCount);
  used[g.colour[0]!] = 1;
  let score = 0;
  let steps = 0;
  // best[v]: best edge weight into v from a node already in the tree; bestFrom[v] its parent.
  const best = s.best;
  best.fill(Number.NEGATIVE_INFINITY, 0, n);
  const bestFrom = s.bestFrom;
  bestFrom.fill(-1, 0, n);
  // Children lists, to update best[] when a node joins.
  const outStart = s.outStart;
  outStart.fill(0, 0, n + 1);
  for (let v = 0; v < n; v++)
    for (let k = g.inStart[v]!; k < g.inStart[v + 1]!; k++) outStart[g.inFrom[k]! + 1]!++;
  for (let v = 0; v < n; v++) outStart[v + 1]! += outStart[v]!;
  const fill = s.fill;
  for (let v = 0; v < n; v++) fill[v] = outStart[v]!;
  const outTo = s.outTo;
  const outW = s.outW;
  for (let v = 0; v < n; v++) {
    for (let k = g.inStart[v]!; k < g.inStart[v + 1]!; k++) {
      const u = g.inFrom[k]!;
      const j = fill[u]!++;
      outTo[j] = v;
      outW[j] = g.inWeight[k]!;
    }
  }
  const join = (u: number) => {
    for (let j = outStart[u]!; j < outStart[u + 1]!; j++) {
      const v = outTo[j]!;
      if (outW[j]! > best[v]!) {
        best[v] = outW[j]!;
        bestFrom[v] = u;
      }
    }
  };
  join(0);
  for (;;) {
    steps++;
    let pick = -1;
    let pickW = 0;
    for (let v = 1; v < n; v++) {
      if (parent[v]! >= 0 || used[g.colour[v]!]) continue;
      if (best[v]! > pickW) {
        pickW = best[v]!;
        pick = v;
      }
    }
    if (pick < 0) break;
    parent[pick] = bestFrom[pick]!;
    used[g.colour[pick]!] = 1;
    score += pickW;
    join(pick);
  }
  // Insertion pass: a left-out node with a negative best edge joins when its positive children outweigh it.
  for (let v = 1; v < n; v++) {
    if (parent[v]! >= 0 || used[g.colour[v]!] || bestFrom[v]! < 0) continue;
    let gain = best[v]!;
    // Best improvement per child (parallel edges v→c count once, at their best weight).
    const moves = new Map<number, number>();
    for (let j = outStart[v]!; j < outStart[v + 1]!; j++) {
      const c = outTo[j]!;
      if (parent[c]! < 0) continue;
      const delta = outW[j]! - edgeWeight(g, parent[c]!, c);
      if (delta > (moves.get(c) ?? 0)) moves.set(c, delta);
    }
    for (const delta of moves.values()) gain += delta;
    steps++;
    if (gain > 1e-12) {
      parent[v] = bestFrom[v]!;
      used[g.colour[v]!] = 1;
      for (const c of moves.keys()) parent[c] = v;
      score += gain;
    }
  }
  return { parent, score, exact: false, steps };
}

/** Growable working arrays of {@link solveGreedy}. */
class GreedyScratch {
  used = new Uint8Array(64);
  best = new Float64Array(64);
  bestFrom = new Int32Array(64);
  outStart = new Int32Array(65);
  fill = new Int32Array(64);
  outTo = new Int32Array(256);
  outW = new Float64Array(256);

  /** Makes room for n nodes, c colours and e edges. */
  fit(n: number, c: number, e: number): this {
    if (this.used.length < c) this.used = new Uint8Array(2 * c);
    if (this.best.length < n) {
      this.best = new Float64Array(2 * n);
      this.bestFrom = new Int32Array(2 * n);
      this.outStart = new Int32Array(2 * n + 1);
      this.fill = new Int32Array(2 * n);
    }
    if (this.outTo.length < e) {
      this.outTo = new Int32Array(2 * e);
      this.outW = new Float64Array(2 * e);
    }
    return this;
  }
}

const scratch = new GreedyScratch();

/** Weight of the best edge u→v (−∞ when none). */
export function edgeWeight(g: FragGraph, u: number, v: number): number {
  let w = Number.NEGATIVE_INFINITY;
  for (let k = g.inStart[v]!; k < g.inStart[v + 1]!; k++)
    if (g.inFrom[k] === u && g.inWeight[k]! > w) w = g.inWeight[k]!;
  return w;
}
