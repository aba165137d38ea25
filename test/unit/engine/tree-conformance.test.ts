// One conformance suite for every maximum-colorful-subtree solver (CONVENTIONS.md §12): the exact branch and
// bound, the greedy heuristic and `solveTree` run the same cases, and a brute-force reference written here
// settles the optimum. The problem is the one of Böcker & Rasche 2008, Bioinformatics 24(16):i49; the
// greedy and insertion heuristics follow Rauf et al. 2013, J Comput Biol 20(4):311.
import { readFileSync } from 'node:fs';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { solveExact } from '../../../engine/tree/branch-and-bound.js';
import { buildGraph, type FragGraph, type TreeSolution, treeScore } from '../../../engine/tree/graph.js';
import { solveGreedy } from '../../../engine/tree/greedy.js';
import { solveTree } from '../../../engine/tree/solve.js';

interface Edge {
  from: number;
  to: number;
  weight: number;
}
interface GraphCase {
  name: string;
  colour: number[];
  edges: Edge[];
  optimum?: number;
  chainLike: boolean;
}

const fixture = JSON.parse(
  readFileSync(new URL('../../fixtures/engine/tree-cases.json', import.meta.url), 'utf8'),
) as { cases: GraphCase[] };

const EPS = 1e-9;

/**
 * Reference optimum by exhaustion: every subset of the non-root nodes; a subset is a colorful tree when its
 * colours (and the root's) are distinct and every kept node has a kept parent (parents have lower indices,
 * so that reaches the root); given the kept set, each node takes its best edge from a kept parent.
 */
function bruteForce(colour: readonly number[], edges: readonly Edge[]): number {
  const n = colour.length;
  if (n > 15) throw new Error('brute force is for small graphs');
  const inEdges: Edge[][] = colour.map(() => []);
  for (const e of edges) inEdges[e.to]!.push(e);
  let best = 0;
  for (let mask = 0; mask < 1 << (n - 1); mask++) {
    const kept = (v: number) => v === 0 || ((mask >> (v - 1)) & 1) === 1;
    const colours = new Set<number>([colour[0]!]);
    let score = 0;
    let ok = true;
    for (let v = 1; v < n && ok; v++) {
      if (!kept(v)) continue;
      if (colours.has(colour[v]!)) ok = false;
      colours.add(colour[v]!);
      let w = Number.NEGATIVE_INFINITY;
      for (const e of inEdges[v]!) if (kept(e.from) && e.weight > w) w = e.weight;
      if (w === Number.NEGATIVE_INFINITY) ok = false;
      score += w;
    }
    if (ok && score > best) best = score;
  }
  return best;
}

interface Solver {
  name: string;
  exact: boolean;
  solve: (g: FragGraph) => TreeSolution;
}

const SOLVERS: Solver[] = [
  { name: 'branch and bound (solveExact)', exact: true, solve: (g) => solveExact(g) },
  { name: 'greedy heuristic (solveGreedy)', exact: false, solve: (g) => solveGreedy(g) },
  { name: 'solveTree (default limits)', exact: true, solve: (g) => solveTree(g) },
];

/** A solution must be a colorful subtree of the graph whose reported score is its real score. */
function checkValid(g: FragGraph, s: TreeSolution): number {
  expect(s.parent.length).toBe(g.nodeCount);
  const real = treeScore(g, s.parent); // throws when the tree is not colorful or uses a missing edge
  expect(s.score).toBeCloseTo(real, 9);
  return real;
}

// Random graphs in the solver's form: edges from lower to higher index, a few colours shared by several
// nodes (several formula readings of one peak), weights of both signs, some parallel-free sparsity.
const graphArb = (maxNodes: number) =>
  fc
    .record({
      n: fc.integer({ min: 1, max: maxNodes }),
      colours: fc.integer({ min: 1, max: maxNodes }),
      density: fc.double({ min: 0.1, max: 0.7, noNaN: true }),
    })
    .chain(({ n, colours, density }) =>
      fc.record({
        colour: fc.tuple(
          fc.constant(0),
          ...Array.from({ length: n - 1 }, () => fc.integer({ min: 1, max: Math.max(1, colours) })),
        ),
        edges: fc
          .array(
            fc.record({
              pick: fc.double({ min: 0, max: 1, noNaN: true }),
              weight: fc.oneof(
                fc.double({ min: -4, max: 6, noNaN: true }),
                fc.integer({ min: -3, max: 5 }), // integers make exact ties common
              ),
            }),
            { minLength: (n * (n - 1)) / 2, maxLength: (n * (n - 1)) / 2 },
          )
          .map((raw) => {
            const edges: Edge[] = [];
            let k = 0;
            for (let to = 1; to < n; to++) {
              for (let from = 0; from < to; from++) {
                const r = raw[k++]!;
                if (r.pick < density) edges.push({ from, to, weight: r.weight });
              }
            }
            return edges;
          }),
      }),
    );

// Chain-like graphs: a rooted tree of positive edges with one node per colour (what a clean glycoside
// ladder gives). The greedy heuristic takes every edge, which is optimal.
const chainLikeArb = fc
  .array(
    fc.record({
      parentPick: fc.double({ min: 0, max: 1, noNaN: true }),
      weight: fc.double({ min: 0.01, max: 8, noNaN: true }),
    }),
    {
      minLength: 0,
      maxLength: 13,
    },
  )
  .map((nodes) => {
    const colour = [0, ...nodes.map((_, i) => i + 1)];
    const edges: Edge[] = nodes.map((x, i) => {
      const to = i + 1;
      // Mostly the previous node (a chain), sometimes an earlier one (a branch).
      const from = x.parentPick < 0.7 ? to - 1 : Math.floor(((x.parentPick - 0.7) / 0.3) * to);
      return { from: Math.min(from, to - 1), to, weight: x.weight };
    });
    return { colour, edges };
  });

describe.each(SOLVERS)('tree solver conformance: $name', (solver) => {
  describe.each(fixture.cases)('hand-made case: $name', (c) => {
    const g = buildGraph(c.colour, c.edges);

    it('the hand-worked optimum agrees with the brute-force reference', () => {
      expect(bruteForce(c.colour, c.edges)).toBeCloseTo(c.optimum!, 9);
    });

    it('returns a valid colorful tree whose score it reports truly', () => {
      checkValid(g, solver.solve(g));
    });

    if (solver.exact) {
      it('finds the optimum and says it is exact', () => {
        const s = solver.solve(g);
        expect(s.score).toBeCloseTo(c.optimum!, 9);
        expect(s.exact).toBe(true);
      });
    } else {
      it('never beats the optimum and never claims to be exact', () => {
        const s = solver.solve(g);
        expect(s.score).toBeLessThanOrEqual(c.optimum! + EPS);
        expect(s.exact).toBe(false);
      });
      if (c.chainLike) {
        it('is optimal on this chain-like case', () => {
          expect(solver.solve(g).score).toBeCloseTo(c.optimum!, 9);
        });
      }
    }
  });

  it('agrees with the brute force on seeded random graphs (≤ 12 nodes), or stays below it if heuristic', () => {
    fc.assert(
      fc.property(graphArb(12), ({ colour, edges }) => {
        const g = buildGraph(colour, edges);
        const s = solver.solve(g);
        const real = checkValid(g, s);
        const opt = bruteForce(colour, edges);
        if (solver.exact) expect(real).toBeCloseTo(opt, 9);
        else expect(real).toBeLessThanOrEqual(opt + EPS);
      }),
      { seed: 20261202, numRuns: 250 },
    );
  });

  it('agrees with the brute force on seeded random graphs of 14 nodes', () => {
    fc.assert(
      fc.property(
        graphArb(14).filter(({ colour }) => colour.length >= 13),
        ({ colour, edges }) => {
          const g = buildGraph(colour, edges);
          const s = solver.solve(g);
          const real = checkValid(g, s);
          const opt = bruteForce(colour, edges);
          if (solver.exact) expect(real).toBeCloseTo(opt, 9);
          else expect(real).toBeLessThanOrEqual(opt + EPS);
        },
      ),
      { seed: 7, numRuns: 25 },
    );
  });

  it('is optimal on seeded random chain-like graphs (a tree of positive edges, one node per peak)', () => {
    fc.assert(
      fc.property(chainLikeArb, ({ colour, edges }) => {
        const g = buildGraph(colour, edges);
        const s = solver.solve(g);
        checkValid(g, s);
        const total = edges.reduce((a, e) => a + e.weight, 0);
        expect(s.score).toBeCloseTo(total, 9);
        expect(bruteForce(colour, edges)).toBeCloseTo(total, 9);
      }),
      { seed: 42, numRuns: 150 },
    );
  });
});

describe('the random sample is not trivial', () => {
  it('holds graphs where the heuristic falls short of the optimum, so the comparison can fail', () => {
    const samples = fc.sample(graphArb(12), { seed: 20261202, numRuns: 250 });
    const short = samples.filter(({ colour, edges }) => {
      const g = buildGraph(colour, edges);
      return solveGreedy(g).score < bruteForce(colour, edges) - 1e-6;
    });
    expect(short.length).toBeGreaterThan(0);
  });
});

describe('exact solver limits', () => {
  // The colour-conflict case where the greedy seed (5) is not optimal (8): the search must run to prove it.
  const conflict = fixture.cases.find((c) => c.name.startsWith('colour conflict: the heaviest'))!;

  it('with a tiny step budget reports exact: false and still returns a valid tree', () => {
    const g = buildGraph(conflict.colour, conflict.edges);
    const s = solveExact(g, { maxSteps: 1 });
    expect(s.exact).toBe(false);
    const real = checkValid(g, s);
    expect(real).toBeLessThanOrEqual(conflict.optimum! + EPS);
    expect(real).toBeGreaterThanOrEqual(solveGreedy(g).score - EPS); // never worse than its seed
  });

  it('with a tiny step budget on random graphs: never claims exactness it did not prove, trees stay valid', () => {
    fc.assert(
      fc.property(graphArb(12), fc.integer({ min: 1, max: 6 }), ({ colour, edges }, maxSteps) => {
        const g = buildGraph(colour, edges);
        const s = solveExact(g, { maxSteps });
        const real = checkValid(g, s);
        const opt = bruteForce(colour, edges);
        expect(real).toBeLessThanOrEqual(opt + EPS);
        if (s.exact) expect(real).toBeCloseTo(opt, 9);
      }),
      { seed: 99, numRuns: 150 },
    );
  });

  it('solveTree hands graphs above maxExactNodes to the heuristic and says so', () => {
    const g = buildGraph(conflict.colour, conflict.edges);
    const s = solveTree(g, { maxExactNodes: 3 });
    expect(s.exact).toBe(false);
    checkValid(g, s);
    const t = solveTree(g, { maxExactNodes: 4 });
    expect(t.exact).toBe(true);
    expect(t.score).toBeCloseTo(conflict.optimum!, 9);
  });

  it('solveTree with a step budget it runs out of reports exact: false', () => {
    const g = buildGraph(conflict.colour, conflict.edges);
    const s = solveTree(g, { maxExactSteps: 1 });
    expect(s.exact).toBe(false);
    checkValid(g, s);
  });

  it('the exact solver never scores below the heuristic on larger random graphs (60 nodes)', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 20, max: 60 }),
        fc.array(fc.double({ min: -2, max: 5, noNaN: true }), { minLength: 400, maxLength: 400 }),
        (n, ws) => {
          const colour = Array.from({ length: n }, (_, v) => (v === 0 ? 0 : 1 + (v % Math.ceil(n / 2))));
          const edges: Edge[] = [];
          let k = 0;
          for (let to = 1; to < n; to++) {
            for (const from of [to - 1, Math.floor(to / 2), Math.floor(to / 3)]) {
              if (from < to && !edges.some((e) => e.from === from && e.to === to)) {
                edges.push({ from, to, weight: ws[k++ % ws.length]! });
              }
            }
          }
          const g = buildGraph(colour, edges);
          const exact = solveExact(g);
          const greedy = solveGreedy(g);
          checkValid(g, exact);
          checkValid(g, greedy);
          expect(exact.score).toBeGreaterThanOrEqual(greedy.score - EPS);
        },
      ),
      { seed: 3, numRuns: 30 },
    );
  });
});

describe('buildGraph', () => {
  it('rejects edges that break the topological (index) order', () => {
    expect(() => buildGraph([0, 1], [{ from: 1, to: 0, weight: 1 }])).toThrow(RangeError);
    expect(() => buildGraph([0, 1], [{ from: 1, to: 1, weight: 1 }])).toThrow(RangeError);
    expect(() => buildGraph([0, 1], [{ from: 0, to: 2, weight: 1 }])).toThrow(RangeError);
  });

  it('treeScore rejects trees that are not colorful or use missing edges', () => {
    const g = buildGraph(
      [0, 1, 1],
      [
        { from: 0, to: 1, weight: 1 },
        { from: 0, to: 2, weight: 1 },
      ],
    );
    expect(() => treeScore(g, Int32Array.from([0, 0, 0]))).toThrow(/colour/);
    expect(() => treeScore(g, Int32Array.from([0, -1, 1]))).toThrow(/excluded/);
    expect(() => treeScore(g, Int32Array.from([-1, -1, -1]))).toThrow(/root/);
    const h = buildGraph([0, 1, 2], [{ from: 0, to: 1, weight: 1 }]);
    expect(() => treeScore(h, Int32Array.from([0, -1, 0]))).toThrow(/no edge/);
  });
});
