import fc from 'fast-check';
import isotopic from 'isotopic-distribution';
import { describe, expect, it } from 'vitest';
import {
  createIsotopeCalculator,
  type Formula,
  formatFormula,
  isotopePattern,
  parseFormula,
  scoreIsotopePattern,
} from '../../../engine/chem/index.js';
import { formulaArb } from './arbitraries.js';

/** isotopic-distribution's syntax: charge in parentheses. */
function oracleText(f: Formula): string {
  const atoms = formatFormula({ counts: f.counts, charge: 0 });
  return f.charge === 0 ? atoms : `${atoms}(${f.charge > 0 ? '+' : ''}${f.charge})`;
}

/** Peaks of isotopic-distribution (npm), joined within 0.1 m/z so each nominal shift is one centroid. */
function oraclePeaks(f: Formula): { mz: number; abundance: number }[] {
  const dist = new isotopic.IsotopicDistribution(oracleText(f), { fwhm: 0.1 });
  return (dist.getPeaks({ maxValue: 1 }) as { x: number; y: number }[]).map((p) => ({
    mz: p.x,
    abundance: p.y,
  }));
}

describe('isotope patterns', () => {
  it('match isotopic-distribution (npm, general-purpose library) over many random formulas (seeded)', () => {
    const calc = createIsotopeCalculator({ maxPeaks: 8, minAbundance: 1e-3 });
    fc.assert(
      fc.property(formulaArb(2), (f) => {
        const ours = calc.pattern(f);
        const theirs = oraclePeaks(f).filter((p) => p.abundance >= 1e-3);
        const z = Math.abs(f.charge) || 1;
        // Same peaks where both cover the shift range (ours stops at M+7).
        const mono = ours[0]!.mz - ours[0]!.shift / z;
        const inRange = theirs.filter((p) => Math.round((p.mz - mono) * z) < 8);
        expect(ours.length).toBe(inRange.length);
        inRange.forEach((p, i) => {
          expect(ours[i]!.mz).toBeCloseTo(p.mz, 5);
          expect(ours[i]!.abundance).toBeCloseTo(p.abundance, 5);
        });
      }),
      { seed: 23, numRuns: 150 },
    );
  });

  it('gives the cyanidin 3-glucoside envelope with M+1/M ≈ 0.234 (NIST abundances [calc])', () => {
    const p = isotopePattern(parseFormula('C21H21O11+'));
    expect(p.map((x) => x.shift)).toEqual([0, 1, 2, 3]);
    expect(p[0]!.mz).toBeCloseTo(449.10784, 5); // REFERENCE.md §3 [calc]
    expect(p[0]!.abundance).toBe(1);
    expect(p[1]!.abundance).toBeCloseTo(0.2337, 3);
    const total = p.reduce((a, x) => a + x.fraction, 0);
    expect(total).toBeGreaterThan(0.999);
  });

  it('pure carbon follows the binomial: M+1/M = n × 0.0107/0.9893 (NIST abundances [calc])', () => {
    for (const n of [1, 6, 30, 60]) {
      const p = isotopePattern(parseFormula(`C${n}`));
      expect(p[1]!.abundance / p[0]!.abundance).toBeCloseTo((n * 0.0107) / 0.9893, 10);
      // the M+1 centroid is exactly one 13C–12C spacing up (REFERENCE.md §1: 1.00335484)
      expect(p[1]!.mz - p[0]!.mz).toBeCloseTo(1.00335483507, 9);
    }
  });

  it('spaces peaks by 1/z for multiply charged ions', () => {
    const p = isotopePattern(parseFormula('C27H32O16+2'));
    expect(p[1]!.mz - p[0]!.mz).toBeCloseTo(1.0033 / 2, 3);
  });

  it('writes into caller buffers without allocating', () => {
    const calc = createIsotopeCalculator({ maxPeaks: 4 });
    const fr = new Float64Array(4);
    const mz = new Float64Array(4);
    expect(calc.patternInto(parseFormula('C15H11O6+').counts, 1, fr, mz)).toBe(4);
    expect(mz[0]).toBeCloseTo(287.05501, 5); // REFERENCE.md §3 [calc]
    expect(fr[0]! + fr[1]! + fr[2]! + fr[3]!).toBeGreaterThan(0.999);
  });

  it('rejects negative counts and bad options', () => {
    expect(() => isotopePattern({ counts: [1, -2, 0, 0, 0, 0, 0, 0, 0], charge: 0 })).toThrow(
      expect.objectContaining({ code: 'isotope-negative-count' }),
    );
    expect(() => createIsotopeCalculator({ maxPeaks: 0 })).toThrow(
      expect.objectContaining({ code: 'isotope-options' }),
    );
  });
});

describe('isotope envelope scoring', () => {
  const predicted = isotopePattern(parseFormula('C21H21O11+'));
  const tol = { ppm: 10 };

  it('scores an envelope equal to the prediction as 1', () => {
    const observed = predicted.map((p) => [p.mz, p.abundance * 1e6] as const);
    const s = scoreIsotopePattern(observed, predicted, { tolerance: tol });
    expect(s.similarity).toBeCloseTo(1, 10);
    expect(s.matched).toBe(s.peaks.length);
    for (const p of s.peaks) {
      expect(p.deviation).toBeCloseTo(0, 10);
      expect(p.ppm).toBeCloseTo(0, 6);
    }
  });

  it('lowers the score for a distorted envelope and reports where', () => {
    const observed = predicted.map(
      (p) => [p.mz + 0.001, p.shift === 1 ? p.abundance * 2 : p.abundance] as const,
    );
    const s = scoreIsotopePattern(observed, predicted, { tolerance: tol });
    expect(s.similarity).toBeLessThan(0.9);
    expect(s.similarity).toBeGreaterThan(0.7);
    expect(s.peaks.find((p) => p.shift === 1)!.deviation).toBeGreaterThan(0);
    expect(s.peaks[0]!.ppm).toBeCloseTo((0.001 / 449.10784) * 1e6, 2);
  });

  it('counts missing peaks as zero, sums resolved fine structure, and ignores peaks out of tolerance', () => {
    const mono = predicted[0]!;
    const s = scoreIsotopePattern([[mono.mz, 100]], predicted, { tolerance: tol });
    expect(s.matched).toBe(1);
    expect(s.similarity).toBeCloseTo(
      predicted[0]!.fraction /
        predicted.filter((p) => p.abundance >= 0.01).reduce((a, p) => a + p.fraction, 0),
      6,
    );
    const split = scoreIsotopePattern(
      [
        [mono.mz, 50],
        [mono.mz + 0.0005, 50],
      ],
      [mono],
      { tolerance: tol },
    );
    expect(split.similarity).toBeCloseTo(1, 10);
    expect(split.peaks[0]!.observedMz).toBeCloseTo(mono.mz + 0.00025, 9);
    expect(scoreIsotopePattern([[mono.mz + 0.1, 100]], predicted, { tolerance: tol }).similarity).toBe(0);
  });
});
