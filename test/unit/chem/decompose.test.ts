import fc from 'fast-check';
import mfFinder from 'mf-finder';
import { describe, expect, it } from 'vitest';
import {
  createDecomposer,
  createFormulaFilter,
  DEFAULT_RANGES,
  type Decomposer,
  decomposeMass,
  type ElementRanges,
  ELEMENT_SYMBOLS,
  type Formula,
  formatElementRanges,
  formatFormula,
  formulaMz,
  formulaOf,
  ionFormula,
  ionMz,
  isNonNegative,
  ionType,
  ION_TYPES,
  neutralMass,
  parseElementRanges,
  parseFormula,
  rangesFromFormula,
  type Tolerance,
  toleranceDa,
} from '../../../engine/chem/index.js';

const wide = createDecomposer();
const names = (d: { formula: Formula }[]): string[] => d.map((x) => formatFormula(x.formula));

/** Every formula in the ranges, by plain nested enumeration: the reference the decomposer must equal. */
function bruteForce(
  ranges: ElementRanges,
  lo: number,
  hi: number,
  maxCounts?: readonly number[],
): Set<string> {
  const els = ELEMENT_SYMBOLS.map((s, i) => ({ i, r: ranges[s] })).filter((e) => e.r && e.r[1] > 0);
  const out = new Set<string>();
  const counts = new Array<number>(ELEMENT_SYMBOLS.length).fill(0);
  const rec = (k: number): void => {
    if (k === els.length) {
      const m = neutralMass({ counts, charge: 0 });
      if (m >= lo && m <= hi) out.add(formatFormula({ counts: [...counts], charge: 0 }));
      return;
    }
    const { i, r } = els[k]!;
    const max = Math.min(r![1], maxCounts ? maxCounts[i]! : Number.POSITIVE_INFINITY);
    for (let n = r![0]; n <= max; n++) {
      counts[i] = n;
      rec(k + 1);
    }
    counts[i] = 0;
  };
  rec(0);
  return out;
}

const SMALL: ElementRanges = {
  C: [0, 14],
  H: [0, 24],
  N: [0, 3],
  O: [0, 9],
  S: [0, 1],
  Na: [0, 1],
  Cl: [0, 2],
};

describe('mass decomposition', () => {
  it('finds cyanidin 3-glucoside C21H21O11+ at 449.10784 with charge +1, near 0 ppm (REFERENCE.md §3 [calc])', () => {
    const res = wide.decompose(449.10784, { ppm: 5 }, { charge: 1 });
    const hit = res.find((d) => formatFormula(d.formula) === 'C21H21O11+');
    expect(hit).toBeDefined();
    expect(Math.abs(hit!.ppm)).toBeLessThan(0.05);
    expect(hit!.rdbe).toBe(11.5);
    expect(hit!.mz).toBeCloseTo(449.10784, 5);
    // Best error first.
    for (let i = 1; i < res.length; i++)
      expect(Math.abs(449.10784 - res[i]!.mz)).toBeGreaterThanOrEqual(Math.abs(449.10784 - res[i - 1]!.mz));
    for (const d of res) {
      expect(d.formula.charge).toBe(1);
      expect(d.mz).toBeCloseTo(formulaMz(d.formula), 9);
      expect(d.ppm).toBeCloseTo(((449.10784 - d.mz) / d.mz) * 1e6, 9);
    }
  });

  it('gives neutral molecules for an ion type: [M+H]+ 449.10784 → C21H20O11, [M]+ → C21H21O11', () => {
    const mh = wide.decompose(449.10784, { ppm: 2 }, { ion: ionType('[M+H]+')! });
    expect(names(mh)).toContain('C21H20O11');
    expect(mh.every((d) => d.formula.charge === 0)).toBe(true);
    const m = wide.decompose(449.10784, { ppm: 2 }, { ion: ionType('[M]+')! });
    expect(names(m)).toContain('C21H21O11');
    // [M-H]- needs a hydrogen to remove: no H-free molecule is proposed.
    const neg = wide.decompose(60.99312, { ppm: 20 }, { ion: ionType('[M-H]-')! });
    expect(neg.every((d) => d.formula.counts[1]! >= 1)).toBe(true);
  });

  it('finds the formula again from its mass (property, seeded): neutral, charged and per ion type', () => {
    const inDefault = fc.record({
      c: fc.integer({ min: 1, max: 60 }),
      h: fc.integer({ min: 0, max: 118 }),
      n: fc.integer({ min: 0, max: 10 }),
      o: fc.integer({ min: 0, max: 30 }),
      p: fc.integer({ min: 0, max: 4 }),
      s: fc.integer({ min: 0, max: 4 }),
    });
    fc.assert(
      fc.property(inDefault, fc.constantFrom(0, 1, -1), fc.constantFrom(...ION_TYPES), (a, z, ion) => {
        const neutral = formulaOf({ C: a.c, H: a.h + 2, N: a.n, O: a.o, P: a.p, S: a.s });
        const atoms = formulaOf({ C: a.c, H: a.h, N: a.n, O: a.o, P: a.p, S: a.s }, z);
        const m = formulaMz(atoms);
        expect(names(wide.decompose(m, { ppm: 1 }, { charge: z }))).toContain(formatFormula(atoms));
        if (ion.multiplier === 1 && neutral.counts[1]! <= 120 && isNonNegative(ionFormula(neutral, ion))) {
          const found = wide.decompose(ionMz(neutral, ion), { ppm: 1 }, { ion });
          expect(names(found)).toContain(formatFormula(neutral));
        }
      }),
      { seed: 2026, numRuns: 300 },
    );
  });

  it('equals plain enumeration on small ranges for any table split, tolerance, bound and floor (seeded)', () => {
    const decomposers: Decomposer[] = [1, 8, 64, 600, 1 << 16].map((maxTableSize) =>
      createDecomposer({ ranges: SMALL, maxTableSize }),
    );
    // The splits differ (the conformance is over different table sizes, one of them no table at all).
    expect(new Set(decomposers.map((d) => d.tableSize)).size).toBeGreaterThan(2);
    fc.assert(
      fc.property(
        fc.double({ min: 20, max: 400, noNaN: true }),
        fc.double({ min: 0.5, max: 50, noNaN: true }),
        fc.boolean(),
        fc.option(
          fc.tuple(
            fc.integer({ min: 0, max: 14 }),
            fc.integer({ min: 0, max: 24 }),
            fc.integer({ min: 0, max: 9 }),
          ),
        ),
        (mass, ppm, floor, bound) => {
          const tol: Tolerance = floor ? { ppm, floorDa: 0.01 } : { ppm };
          const d = toleranceDa(mass, tol);
          const maxCounts = bound ? [bound[0], bound[1], 3, bound[2], 0, 1, 1, 0, 2] : undefined;
          const expected = bruteForce(SMALL, mass - d, mass + d, maxCounts);
          for (const dec of decomposers) {
            const got = names(dec.decompose(mass, tol, maxCounts ? { maxCounts } : {}));
            expect(got.length).toBe(new Set(got).size);
            expect(new Set(got)).toEqual(expected);
          }
        },
      ),
      { seed: 99, numRuns: 150 },
    );
  });

  it('gives the same formula sets as mf-finder (npm, general-purpose formula finder) on neutral masses', async () => {
    // mf-finder compares neutral masses only when told allowNeutral: true; its ppm window is taken at the
    // target mass, like ours. No filters on either side.
    const rng = fc.sample(fc.double({ min: 150, max: 1200, noNaN: true }), { seed: 4, numRuns: 25 });
    for (const mass of rng) {
      const res = (await mfFinder.findMFs(mass, {
        ranges: formatElementRanges(DEFAULT_RANGES),
        precision: 5,
        allowNeutral: true,
        limit: 1e7,
      })) as unknown as { mfs: { atoms: Record<string, number> }[] };
      const theirs = new Set(res.mfs.map((r) => formatFormula(formulaOf(r.atoms))));
      expect(new Set(names(wide.decompose(mass, { ppm: 5 })))).toEqual(theirs);
    }
  });

  it('agrees with mf-finder for [M+H]+ (its "H+" ionization reports the neutral M, electron-corrected)', async () => {
    const ranges = 'C0-30 H0-60 N0-4 O0-20';
    const dec = createDecomposer({ ranges: parseElementRanges(ranges) });
    for (const mz of [449.10784, 287.05501, 611.16066, 303.04993]) {
      const res = (await mfFinder.findMFs(mz, {
        ranges,
        precision: 10,
        ionizations: 'H+',
        limit: 1e7,
      })) as unknown as { mfs: { atoms: Record<string, number> }[] };
      const theirs = new Set(res.mfs.map((r) => formatFormula(formulaOf(r.atoms))));
      expect(theirs.size).toBeGreaterThan(0);
      expect(new Set(names(dec.decompose(mz, { ppm: 10 }, { ion: ionType('[M+H]+')! })))).toEqual(theirs);
    }
  });

  it('decomposes fragments as sub-formulas of a precursor, by prepared ranges or per-call bounds', () => {
    const precursor = parseFormula('C27H31O16+');
    const perPrecursor = createDecomposer({ ranges: rangesFromFormula(precursor) });
    const tol = { ppm: 10 };
    // Y1+ (cyanidin + hexose) and Y0+ of cyanidin 3,5-dihexoside (REFERENCE.md §3–4 [calc]).
    for (const [mz, formula] of [
      [449.10784, 'C21H21O11+'],
      [287.05501, 'C15H11O6+'],
    ] as const) {
      const a = names(perPrecursor.decompose(mz, tol, { charge: 1 }));
      const b = names(wide.decompose(mz, tol, { charge: 1, maxCounts: precursor.counts }));
      expect(a).toEqual([formula]);
      expect(b).toEqual(a);
    }
  });

  it('applies a filter and a limit', () => {
    const filter = createFormulaFilter();
    const all = wide.decompose(449.10784, { ppm: 5 }, { charge: 1 });
    const kept = wide.decompose(449.10784, { ppm: 5 }, { charge: 1, filter });
    expect(kept.length).toBeLessThan(all.length);
    expect(names(kept)).toContain('C21H21O11+');
    expect(kept.every((d) => filter(d.formula.counts, 1))).toBe(true);
    expect(wide.decompose(449.10784, { ppm: 5 }, { charge: 1, limit: 3 })).toHaveLength(3);
  });

  it('visits without allocating results and counts them', () => {
    let seen = 0;
    const n = wide.forEach(162.05282, { ppm: 5 }, (counts, atoms) => {
      seen++;
      expect(Math.abs(atoms - 162.05282)).toBeLessThanOrEqual(toleranceDa(162.05282, { ppm: 5 }));
      expect(counts).toBeInstanceOf(Int32Array);
    });
    expect(n).toBe(seen);
    expect(n).toBe(decomposeMass(162.05282, { ppm: 5 }).length);
  });

  it('refuses to be re-entered from a visitor', () => {
    expect(() => wide.forEach(162.05282, { ppm: 5 }, () => wide.decompose(18.0106, { ppm: 5 }))).toThrow(
      /reentrant/,
    );
    // and still works afterwards
    expect(wide.decompose(18.01056, { ppm: 5 }).map((d) => formatFormula(d.formula))).toContain('H2O');
  });

  it.each([
    [0, { ppm: 5 }, {}, 'decompose-mass'],
    [Number.NaN, { ppm: 5 }, {}, 'decompose-mass'],
    [100, { ppm: -5 }, {}, 'decompose-tolerance'],
    [100, { ppm: 5 }, { charge: 0.5 }, 'decompose-charge'],
  ])('rejects mass %s tol %j options %j with %s', (mass, tol, options, code) => {
    expect(() => wide.decompose(mass, tol, options)).toThrow(expect.objectContaining({ code }));
  });

  it('returns nothing when the mass is out of reach of the ranges', () => {
    expect(wide.decompose(5000, { ppm: 5 })).toEqual([]);
    expect(createDecomposer({ ranges: {} }).decompose(100, { ppm: 5 })).toEqual([]);
  });
});

describe('element ranges', () => {
  it('reads and writes the --elements syntax', () => {
    const r = parseElementRanges('C0-60 H0-120 N0-10 O0-30 P0-4 S0-4');
    expect(r).toEqual(DEFAULT_RANGES);
    expect(formatElementRanges(r)).toBe('C0-60 H0-120 N0-10 O0-30 P0-4 S0-4');
    expect(parseElementRanges('C6,H0-12 O6 Na0-1')).toEqual({ C: [6, 6], H: [0, 12], O: [6, 6], Na: [0, 1] });
    expect(rangesFromFormula(parseFormula('C27H31O16+'))).toEqual({ C: [0, 27], H: [0, 31], O: [0, 16] });
  });

  it.each([
    ['', 'ranges-syntax'],
    ['C0-', 'ranges-syntax'],
    ['Xx0-4', 'ranges-unknown-element'],
    ['C5-2', 'ranges-invalid'],
    ['C0-2 C0-4', 'ranges-invalid'],
    ['H0-70000', 'ranges-invalid'],
  ])('rejects %j with %s', (text, code) => {
    expect(() => parseElementRanges(text)).toThrow(expect.objectContaining({ code }));
  });

  it('rejects invalid ranges given as objects', () => {
    expect(() => createDecomposer({ ranges: { C: [3, 1] } })).toThrow(
      expect.objectContaining({ code: 'ranges-invalid' }),
    );
  });
});

describe('decomposition edge cases', () => {
  it('never reports the empty formula, even when the window reaches zero', () => {
    const res = createDecomposer().decompose(0.9, { ppm: 0, floorDa: 1 });
    expect(res.map((d) => formatFormula(d.formula))).toEqual(['H']);
  });
});
