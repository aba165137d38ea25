import { solveExact } from './branch-and-bound.js';
import type { FragGraph, TreeSolution } from './graph.js';
import { solveGreedy } from './greedy.js';

/** Options of {@link solveTree}. */
export interface SolveTreeOptions {
  /** Graphs with more nodes than this go straight to the heuristic. @defaultValue 120 */
  maxExactNodes?: number;
  /** Branch-and-bound search nodes before it gives up and keeps its best tree. @defaultValue 20000 */
  maxExactSteps?: number;
}

/**
 * The maximum colorful subtree of a fragmentation graph: exact (branch and bound) up to the documented size,
 * the greedy heuristic beyond it or when the exact search runs out of steps; `exact` says which.
 */
export function solveTree(g: FragGraph, options: SolveTreeOptions = {}): TreeSolution {
  const maxNodes = options.maxExactNodes ?? 120;
  if (g.nodeCount > maxNodes) return solveGreedy(g);
  return solveExact(g, { maxSteps: options.maxExactSteps ?? 20_000 });
}
