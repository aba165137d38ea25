/**
 * A fragmentation graph in compact form (Böcker & Rasche 2008): node 0 is the root (the precursor ion);
 * every other node is one formula explanation of one peak, and a peak is a colour. Edges run from a parent
 * formula to a sub-formula (a neutral loss) and always from a lower to a higher node index, so the
 * index order is a topological order. Incoming edges are stored per node (CSR).
 */
export interface FragGraph {
  readonly nodeCount: number;
  /** Colour (peak) of each node; the root has its own colour. */
  readonly colour: readonly number[];
  readonly colourCount: number;
  /**
   * Incoming edges of node v are `inFrom[inStart[v] .. inStart[v+1])` with weights `inWeight[…]`. (Plain
   * arrays: a graph lives for one spectrum, and typed arrays of more than 64 bytes are allocated outside the
   * JS heap, at a microsecond or more each.)
   */
  readonly inStart: readonly number[];
  readonly inFrom: readonly number[];
  readonly inWeight: readonly number[];
}

/** A colorful subtree: each node's parent (-1 when left out; the root is its own parent). */
export interface TreeSolution {
  readonly parent: Int32Array;
  readonly score: number;
  /** Whether the score is proven maximal. */
  readonly exact: boolean;
  /** Search steps spent (branch-and-bound nodes or greedy rounds). */
  readonly steps: number;
}

/** Builds a {@link FragGraph} from edge lists; edges must satisfy `from < to`. */
export function buildGraph(
  colour: ArrayLike<number>,
  edges: readonly { from: number; to: number; weight: number }[],
): FragGraph {
  const n = colour.length;
  const inStart: number[] = new Array(n + 1).fill(0);
  for (const e of edges) {
    if (!(e.from < e.to) || e.to >= n || e.from < 0)
      throw new RangeError(`edge ${e.from}→${e.to} breaks the order`);
    inStart[e.to + 1]!++;
  }
  for (let v = 0; v < n; v++) inStart[v + 1]! += inStart[v]!;
  const fill = inStart.slice(0, n);
  const inFrom: number[] = new Array(edges.length).fill(0);
  const inWeight: number[] = new Array(edges.length).fill(0);
  for (const e of edges) {
    const k = fill[e.to]!++;
    inFrom[k] = e.from;
    inWeight[k] = e.weight;
  }
  const col = Array.from(colour);
  let colourCount = 0;
  for (const c of col) colourCount = Math.max(colourCount, c + 1);
  return { nodeCount: n, colour: col, colourCount, inStart, inFrom, inWeight };
}

/** Checks that a solution is a colorful tree of the graph and returns its score (for tests and asserts). */
export function treeScore(g: FragGraph, parent: Int32Array): number {
  const used = new Set<number>();
  let score = 0;
  for (let v = 0; v < g.nodeCount; v++) {
    const p = parent[v]!;
    if (v === 0) {
      if (p !== 0) throw new Error('root must be its own parent');
      used.add(g.colour[0]!);
      continue;
    }
    if (p < 0) continue;
    if (parent[p]! < 0) throw new Error(`node ${v} hangs from excluded node ${p}`);
    if (used.has(g.colour[v]!)) throw new Error(`colour ${g.colour[v]} used twice`);
    used.add(g.colour[v]!);
    let w = Number.NaN;
    for (let k = g.inStart[v]!; k < g.inStart[v + 1]!; k++)
      if (g.inFrom[k] === p) w = Math.max(Number.isNaN(w) ? -Infinity : w, g.inWeight[k]!);
    if (Number.isNaN(w)) throw new Error(`no edge ${p}→${v}`);
    score += w;
  }
  return score;
}
