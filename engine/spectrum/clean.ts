import type { Spectrum } from './spectrum.js';

/** ¹³C − ¹²C mass difference (NIST masses): the spacing of the first isotope peak at charge 1. */
export const C13_SPACING = 1.00335483507;

/** Settings of {@link cleanSpectrum}; the rule set's `cleanup` and `tolerances` supply them. */
export interface CleanOptions {
  /** Peaks below this fraction of the base peak are dropped as noise. @defaultValue 0.005 */
  noiseRelative: number;
  /** At most this many peaks are kept, most intense first. @defaultValue 60 */
  maxPeaks: number;
  /** Fold ¹³C isotope peaks into their monoisotopic peak. @defaultValue true */
  deisotope: boolean;
  /** Fragment tolerance in ppm, used to merge peaks and match isotope spacings. */
  ppm: number;
  /** Absolute floor of the fragment tolerance, Da. */
  floorDa: number;
}

/** A cleaned, centroided MS2 spectrum ready for scoring (peaks ascending by m/z). */
export interface CleanSpectrum {
  readonly mz: Float64Array;
  /** Intensities normalised so that the kept peaks sum to 1. */
  readonly intensity: Float64Array;
  /** How many isotope peaks were folded into each peak (evidence that it is monoisotopic). */
  readonly isotopes: Uint8Array;
  /** Index of the peak at the precursor m/z, or -1 when the precursor is not in the MS2 spectrum. */
  readonly precursorIndex: number;
  /** Sum of raw intensities of the peaks kept, before normalisation. */
  readonly rawTotal: number;
  /** How many raw peaks came in and what became of them. */
  readonly counts: {
    input: number;
    invalid: number;
    merged: number;
    isotopes: number;
    noise: number;
    capped: number;
  };
}

/** Tolerance in Da at an m/z. */
export function tolDa(mz: number, ppm: number, floorDa: number): number {
  return Math.max((mz * ppm) / 1e6, floorDa);
}

/**
 * Cleans a raw spectrum: drops invalid peaks and peaks above the precursor, merges peaks within tolerance,
 * folds ¹³C isotope peaks into their monoisotopic peak, applies the noise floor and the peak cap, and
 * normalises intensities. Pure: returns new arrays.
 */
export function cleanSpectrum(spectrum: Spectrum, options: CleanOptions): CleanSpectrum {
  const z = Math.abs(spectrum.precursor.charge ?? 1);
  const precMz = spectrum.precursor.mz;
  // Singly charged fragments of a multiply charged precursor may lie above its m/z.
  const upper = z > 1 ? precMz * z : precMz + tolDa(precMz, options.ppm, options.floorDa) + 0.5;
  let invalid = 0;
  const raw: [number, number][] = [];
  for (const [m, i] of spectrum.peaks) {
    if (!(Number.isFinite(m) && Number.isFinite(i)) || m <= 0 || i <= 0) {
      invalid++;
      continue;
    }
    if (m > upper) continue;
    raw.push([m, i]);
  }
  raw.sort((a, b) => a[0] - b[0]);

  // Merge peaks closer than the tolerance (profile-like splits, duplicated centroids).
  let mz: number[] = [];
  let it: number[] = [];
  for (const [m, i] of raw) {
    const last = mz.length - 1;
    if (last >= 0 && m - mz[last]! <= tolDa(m, options.ppm, options.floorDa)) {
      const sum = it[last]! + i;
      mz[last] = (mz[last]! * it[last]! + m * i) / sum;
      it[last] = sum;
    } else {
      mz.push(m);
      it.push(i);
    }
  }
  const merged = raw.length - mz.length;

  // Fold isotope peaks: a peak at +1.00335/c with an intensity no larger than a carbon count could give.
  const iso = new Uint8Array(mz.length);
  let isotopes = 0;
  if (options.deisotope) {
    const dead = new Uint8Array(mz.length);
    for (let a = 0; a < mz.length; a++) {
      if (dead[a]) continue;
      let cur = a;
      for (let step = 1; step <= 2; step++) {
        const found = findIsotope(mz, it, dead, cur, options);
        if (found < 0) break;
        dead[found] = 1;
        it[a]! += it[found]!;
        iso[a]!++;
        isotopes++;
        cur = found;
      }
    }
    if (isotopes > 0) {
      const keepMz: number[] = [];
      const keepIt: number[] = [];
      const keepIso: number[] = [];
      for (let a = 0; a < mz.length; a++) {
        if (dead[a]) continue;
        keepMz.push(mz[a]!);
        keepIt.push(it[a]!);
        keepIso.push(iso[a]!);
      }
      mz = keepMz;
      it = keepIt;
      iso.set(keepIso);
    }
  }
  const isoCounts = iso.subarray(0, mz.length);

  // Noise floor relative to the base peak, then the cap (most intense first), keeping the precursor.
  const base = it.reduce((a, b) => Math.max(a, b), 0);
  const precTol = tolDa(precMz, options.ppm, options.floorDa);
  let order = mz.map((_, k) => k).filter((k) => it[k]! >= options.noiseRelative * base);
  const noise = mz.length - order.length;
  let capped = 0;
  if (order.length > options.maxPeaks) {
    const isPrec = (k: number) => Math.abs(mz[k]! - precMz) <= precTol;
    order.sort((a, b) => Number(isPrec(b)) - Number(isPrec(a)) || it[b]! - it[a]!);
    capped = order.length - options.maxPeaks;
    order = order.slice(0, options.maxPeaks);
    order.sort((a, b) => a - b);
  }
  const n = order.length;
  // m/z and intensities in one buffer (one allocation outside the JS heap instead of two).
  const both = new Float64Array(2 * n);
  const outMz = both.subarray(0, n);
  const outIt = both.subarray(n);
  const outIso = new Uint8Array(n);
  let total = 0;
  for (let k = 0; k < n; k++) total += it[order[k]!]!;
  let precursorIndex = -1;
  let best = Number.POSITIVE_INFINITY;
  for (let k = 0; k < n; k++) {
    const src = order[k]!;
    outMz[k] = mz[src]!;
    outIt[k] = total > 0 ? it[src]! / total : 0;
    outIso[k] = isoCounts[src]!;
    const d = Math.abs(mz[src]! - precMz);
    if (d <= precTol && d < best) {
      best = d;
      precursorIndex = k;
    }
  }
  return {
    mz: outMz,
    intensity: outIt,
    isotopes: outIso,
    precursorIndex,
    rawTotal: total,
    counts: { input: spectrum.peaks.length, invalid, merged, isotopes, noise, capped },
  };
}

function findIsotope(
  mz: number[],
  it: number[],
  dead: Uint8Array,
  from: number,
  options: CleanOptions,
): number {
  const m0 = mz[from]!;
  for (const c of [1, 2]) {
    const target = m0 + C13_SPACING / c;
    // A spacing is measured between two peaks of one scan, so systematic error cancels: half the fragment
    // tolerance keeps [Y0−H]•'s ¹³C peak (15 ppm from Y0 at m/z 301, REFERENCE.md §6) apart from Y0.
    const tol = Math.max(tolDa(target, options.ppm, options.floorDa) / 2, 0.001);
    // Upper bound of the M+1/M ratio: ~1.1% per carbon, at most ~m/14 carbons (CH2 units), plus slack.
    const maxRatio = ((m0 * c) / 14) * 0.0107 * 1.3 + 0.05;
    for (let k = from + 1; k < mz.length && mz[k]! <= target + tol; k++) {
      if (dead[k] || mz[k]! < target - tol) continue;
      if (it[k]! <= it[from]! * maxRatio) return k;
    }
  }
  return -1;
}
