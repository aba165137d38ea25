export type { ExactOptions } from './branch-and-bound.js';
export { solveExact } from './branch-and-bound.js';
export type { FragGraph, TreeSolution } from './graph.js';
export { buildGraph, treeScore } from './graph.js';
export { edgeWeight, solveGreedy } from './greedy.js';
export type { SolveTreeOptions } from './solve.js';
export { solveTree } from './solve.js';
