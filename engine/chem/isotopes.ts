/**
 * Isotope patterns: the isotopologues of a formula aggregated by nominal mass shift (M, M+1, M+2, …), each
 * with its probability and its abundance-weighted m/z — what an instrument that does not resolve the fine
 * structure records as one centroid.
 *
 * Every isotope here is at least as heavy as the monoisotopic one, so a distribution cut after `maxPeaks`
 * shifts is exact for the shifts it keeps: per element, the n-atom distribution is built by squaring and
 * multiplying truncated polynomials (probability and probability × mass per shift), and the elements'
 * distributions are multiplied the same way. Nothing is sampled or pruned before the end.
 */
import { ELECTRON_MASS, ELEMENT_SYMBOLS, ELEMENTS } from './elements.js';
import type { Formula } from './formula.js';
import { type Tolerance, toleranceDa } from './tolerance.js';

/** One aggregated isotopologue peak. */
export interface IsotopePeak {
  /** Nominal shift from the monoisotopic peak in mass units (0 = M, 1 = M+1, …). */
  readonly shift: number;
  /** Abundance-weighted m/z (mass for neutral formulas), electron-corrected, per charge. */
  readonly mz: number;
  /** Abundance relative to the most intense peak (which is 1). */
  readonly abundance: number;
  /** Probability of this isotopologue group (sums to about 1 over all shifts). */
  readonly fraction: number;
}

/** Options of isotope pattern calculation. */
export interface IsotopePatternOptions {
  /** Number of nominal shifts computed (M … M+maxPeaks−1). @defaultValue 6 */
  readonly maxPeaks?: number;
  /** Peaks below this abundance relative to the most intense are left out. @defaultValue 0.001 */
  readonly minAbundance?: number;
}

/** Codes of isotope-pattern failures. */
export type IsotopeErrorCode = 'isotope-negative-count' | 'isotope-options';

/** A formula or option an isotope pattern cannot be computed for. */
export class IsotopeError extends Error {
  override readonly name = 'IsotopeError';
  constructor(
    readonly code: IsotopeErrorCode,
    message: string,
    options?: { cause?: unknown },
  ) {
    super(message, options);
  }
}

/** A prepared calculator: caches per-element distributions, so repeated patterns cost a few multiplications. */
export interface IsotopeCalculator {
  /** The pattern of a formula (charged formulas give m/z per charge). */
  pattern(f: Formula): IsotopePeak[];
  /**
   * Writes the unpruned distribution into caller buffers (length ≥ maxPeaks): `fraction[k]` and `mz[k]` for
   * shift k; returns the number of shifts written. No allocation once the caches are warm.
   */
  patternInto(counts: ArrayLike<number>, charge: number, fraction: Float64Array, mz: Float64Array): number;
}

const NE = ELEMENT_SYMBOLS.length;

/** Builds an isotope calculator with the given options. */
export function createIsotopeCalculator(options: IsotopePatternOptions = {}): IsotopeCalculator {
  const L = options.maxPeaks ?? 6;
  const minAbundance = options.minAbundance ?? 0.001;
  if (!Number.isInteger(L) || L < 1 || L > 64) {
    throw new IsotopeError('isotope-options', `maxPeaks must be a whole number 1–64, got ${L}`);
  }
  if (!(minAbundance >= 0 && minAbundance < 1)) {
    throw new IsotopeError('isotope-options', `minAbundance must be in [0, 1), got ${minAbundance}`);
  }
  // One atom of each element: probability and probability × mass per shift.
  const single: Float64Array[] = ELEMENTS.map((el) => {
    const d = new Float64Array(2 * L);
    const base = el.isotopes[0]!.massNumber;
    for (const iso of el.isotopes) {
      const k = iso.massNumber - base;
      if (k < 0) throw new IsotopeError('isotope-options', `isotope lighter than the first for ${el.symbol}`);
      if (k >= L) continue;
      d[k]! += iso.abundance;
      d[L + k]! += iso.abundance * iso.mass;
    }
    return d;
  });
  // n-atom distributions per element, filled on demand.
  const cache: Map<number, Float64Array>[] = ELEMENTS.map(() => new Map());
  const acc = new Float64Array(2 * L);
  const tmp = new Float64Array(2 * L);
  const fr = new Float64Array(L);
  const mzBuf = new Float64Array(L);

  /** out = a ⊗ b, truncated to L shifts; out may alias neither a nor b. */
  function multiply(a: Float64Array, b: Float64Array, out: Float64Array): void {
    for (let k = 0; k < L; k++) {
      let p = 0;
      let w = 0;
      for (let i = 0; i <= k; i++) {
        const pa = a[i]!;
        const pb = b[k - i]!;
        if (pa === 0 && a[L + i] === 0) continue;
        p += pa * pb;
        w += a[L + i]! * pb + pa * b[L + k - i]!;
      }
      out[k] = p;
      out[L + k] = w;
    }
  }

  function power(e: number, n: number): Float64Array {
    const hit = cache[e]!.get(n);
    if (hit) return hit;
    let result: Float64Array;
    if (n === 1) result = single[e]!;
    else {
      const half = power(e, n >> 1);
      result = new Float64Array(2 * L);
      multiply(half, half, result);
      if (n & 1) {
        const t = new Float64Array(2 * L);
        multiply(result, single[e]!, t);
        result = t;
      }
    }
    cache[e]!.set(n, result);
    return result;
  }

  function patternInto(
    counts: ArrayLike<number>,
    charge: number,
    fraction: Float64Array,
    mz: Float64Array,
  ): number {
    acc.fill(0);
    acc[0] = 1;
    for (let e = 0; e < NE; e++) {
      const n = counts[e] ?? 0;
      if (n === 0) continue;
      if (n < 0 || !Number.isInteger(n)) {
        throw new IsotopeError(
          'isotope-negative-count',
          `element counts must be whole numbers ≥ 0, got ${n}`,
        );
      }
      multiply(acc, power(e, n), tmp);
      acc.set(tmp);
    }
    const az = Math.abs(charge);
    for (let k = 0; k < L; k++) {
      const p = acc[k]!;
      fraction[k] = p;
      const mass = p > 0 ? acc[L + k]! / p : Number.NaN;
      mz[k] = az === 0 ? mass : (mass - charge * ELECTRON_MASS) / az;
    }
    return L;
  }

  function pattern(f: Formula): IsotopePeak[] {
    patternInto(f.counts, f.charge, fr, mzBuf);
    let max = 0;
    for (let k = 0; k < L; k++) if (fr[k]! > max) max = fr[k]!;
    const out: IsotopePeak[] = [];
    for (let k = 0; k < L; k++) {
      const p = fr[k]!;
      if (!(p > 0) || p / max < minAbundance) continue;
      out.push({ shift: k, mz: mzBuf[k]!, abundance: p / max, fraction: p });
    }
    return out;
  }

  return { pattern, patternInto };
}

let shared: IsotopeCalculator | undefined;

/** The isotope pattern of a formula with default options (a shared calculator, caches kept). */
export function isotopePattern(f: Formula, options?: IsotopePatternOptions): IsotopePeak[] {
  if (options) return createIsotopeCalculator(options).pattern(f);
  shared ??= createIsotopeCalculator();
  return shared.pattern(f);
}

/** An observed envelope: [m/z, intensity] pairs (any order). */
export type ObservedPeaks = readonly (readonly [mz: number, intensity: number])[];

/** How one predicted peak was found in the observed envelope. */
export interface IsotopePeakMatch {
  readonly shift: number;
  readonly predictedMz: number;
  /** Predicted share of the envelope (the compared peaks sum to 1). */
  readonly predicted: number;
  /** Intensity-weighted m/z of the observed peaks within tolerance, or undefined when none. */
  readonly observedMz: number | undefined;
  /** Observed share of the envelope (the compared peaks sum to 1; 0 when missing). */
  readonly observed: number;
  /** observed − predicted share. */
  readonly deviation: number;
  /** m/z error of the observed centroid in ppm, or undefined when missing. */
  readonly ppm: number | undefined;
}

/** Result of comparing an observed envelope with a predicted pattern. */
export interface IsotopeMatch {
  /** 1 − ½ Σ|observed − predicted| over the compared peaks: 1 identical, 0 disjoint. */
  readonly similarity: number;
  /** Number of predicted peaks found in the observed envelope. */
  readonly matched: number;
  readonly peaks: readonly IsotopePeakMatch[];
}

/** Options of {@link scoreIsotopePattern}. */
export interface IsotopeMatchOptions {
  /** m/z tolerance for matching observed peaks to predicted ones. */
  readonly tolerance: Tolerance;
  /** Predicted peaks below this relative abundance are not compared. @defaultValue 0.01 */
  readonly minAbundance?: number;
}

/**
 * Compares an observed isotope envelope with a predicted pattern. Observed peaks within tolerance of a
 * predicted peak are summed (a resolved fine structure counts as one aggregated peak); both sides are
 * normalised to sum 1 over the compared peaks, and the similarity is their overlap Σ min(o, p).
 */
export function scoreIsotopePattern(
  observed: ObservedPeaks,
  predicted: readonly IsotopePeak[],
  options: IsotopeMatchOptions,
): IsotopeMatch {
  const minAbundance = options.minAbundance ?? 0.01;
  const used = predicted.filter((p) => p.abundance >= minAbundance);
  const sums = new Float64Array(used.length);
  const weighted = new Float64Array(used.length);
  for (const [mz, intensity] of observed) {
    if (!(intensity > 0) || !Number.isFinite(mz)) continue;
    let best = -1;
    let bestErr = Number.POSITIVE_INFINITY;
    for (let i = 0; i < used.length; i++) {
      const err = Math.abs(mz - used[i]!.mz);
      if (err <= toleranceDa(used[i]!.mz, options.tolerance) && err < bestErr) {
        best = i;
        bestErr = err;
      }
    }
    if (best >= 0) {
      sums[best]! += intensity;
      weighted[best]! += intensity * mz;
    }
  }
  let pTotal = 0;
  let oTotal = 0;
  for (let i = 0; i < used.length; i++) {
    pTotal += used[i]!.fraction;
    oTotal += sums[i]!;
  }
  let overlap = 0;
  let matched = 0;
  const peaks: IsotopePeakMatch[] = used.map((p, i) => {
    const pr = pTotal > 0 ? p.fraction / pTotal : 0;
    const ob = oTotal > 0 ? sums[i]! / oTotal : 0;
    overlap += Math.min(pr, ob);
    const found = sums[i]! > 0;
    if (found) matched++;
    const omz = found ? weighted[i]! / sums[i]! : undefined;
    return {
      shift: p.shift,
      predictedMz: p.mz,
      predicted: pr,
      observedMz: omz,
      observed: ob,
      deviation: ob - pr,
      ppm: omz === undefined ? undefined : ((omz - p.mz) / p.mz) * 1e6,
    };
  });
  return { similarity: oTotal > 0 ? Math.min(1, overlap) : 0, matched, peaks };
}
