/**
 * Mass decomposition: every formula whose monoisotopic mass lies within tolerance of a measured mass, over
 * bounded element ranges — complete, not sampled.
 *
 * Method: an exact meet-in-the-middle enumeration (a bounded-range relative of the extended residue table of
 * Böcker & Lipták 2005/2007, which it replaces for bounded ranges). The elements are split in two groups. All
 * count combinations of the "table" group are precomputed once, sorted by mass and indexed by mass buckets;
 * a call enumerates the combinations of the "outer" group whose mass can still reach the window (each loop's
 * count range is cut by the lightest and heaviest completion of the remaining elements) and looks up the
 * matching table entries in O(1) per outer combination. Every candidate is checked against the exact window,
 * so the result is exactly the set of formulas within tolerance. The split is chosen to make the table as
 * large as allowed, which makes the outer enumeration as small as possible.
 */
import { ELECTRON_MASS, ELEMENT_SYMBOLS, MONO_MASSES } from './elements.js';
import {
  DEFAULT_RANGES,
  ElementRangesError,
  type ElementRanges,
  elementRangesProblem,
} from './element-ranges.js';
import type { FormulaPredicate } from './filters.js';
import { type Formula, rdbe } from './formula.js';
import { type IonType, mzFromNeutralMass, neutralMassFromMz } from './ions.js';
import { type Tolerance, toleranceDa, toleranceProblem } from './tolerance.js';

const NE = ELEMENT_SYMBOLS.length;
// Slack for float rounding in the pruning bounds; candidates are then checked against the exact window.
const EPS = 1e-9;
// Table budget relative to sqrt(search space): past this, calls are dominated by writing out the results.
const TABLE_FACTOR = 8;

/** Options of {@link createDecomposer}. */
export interface DecomposerOptions {
  /** Element ranges searched. @defaultValue {@link DEFAULT_RANGES} (C0-60 H0-120 N0-10 O0-30 P0-4 S0-4) */
  readonly ranges?: ElementRanges;
  /**
   * Largest precomputed table (entries). Bigger tables make calls faster and preparation slower; the
   * decomposer uses about sqrt(search space) × 8 entries, capped here. @defaultValue 65536
   */
  readonly maxTableSize?: number;
}

/** Options of one decomposition call. */
export interface DecomposeOptions {
  /**
   * Signed charge of the ion measured: the formulas found are those of the ion itself (e.g. C21H21O11+), with
   * the electron mass accounted for. Ignored when `ion` is given. @defaultValue 0 (a neutral mass)
   */
  readonly charge?: number;
  /** Ion type of the measured m/z: the formulas found are those of the neutral molecule M. */
  readonly ion?: IonType;
  /** Upper element counts for this call only, in element-table order (e.g. a precursor's counts). */
  readonly maxCounts?: ArrayLike<number>;
  /** Keeps a formula only when this returns true (counts of the reported formula, its charge). */
  readonly filter?: FormulaPredicate;
  /** Keep at most this many formulas, best mass error first. @defaultValue no limit */
  readonly limit?: number;
}

/** One formula found. */
export interface Decomposition {
  /** The ion's formula (with `charge`), or the neutral molecule M (with `ion` or neither). */
  readonly formula: Formula;
  /** Theoretical m/z of the measured species (its mass when neutral). */
  readonly mz: number;
  /** Observed minus theoretical, in ppm of the theoretical value (the error in Da is observed − `mz`). */
  readonly ppm: number;
  /** Ring and double-bond equivalents of `formula`. */
  readonly rdbe: number;
}

/**
 * Called for each formula found, with its counts in element-table order (a read-only buffer reused between
 * calls: copy it to keep it, never write to it) and the mass of its atoms.
 */
export type DecompositionVisitor = (counts: Int32Array, atomsMass: number) => void;

/** A prepared decomposer: the table is built once and every call reuses it. Not reentrant. */
export interface Decomposer {
  /** The ranges it searches. */
  readonly ranges: ElementRanges;
  /** Entries of its precomputed table (for diagnostics and benchmarks). */
  readonly tableSize: number;
  /** Formulas within tolerance of `mz`, best absolute mass error first. */
  decompose(mz: number, tol: Tolerance, options?: DecomposeOptions): Decomposition[];
  /**
   * Calls `visit` for every formula within tolerance, in no particular order, without allocating;
   * `options.filter` and `options.limit` are not applied. Returns the number of formulas visited.
   */
  forEach(mz: number, tol: Tolerance, visit: DecompositionVisitor, options?: DecomposeOptions): number;
}

/** Codes of decomposition failures (bad arguments). */
export type DecomposeErrorCode = 'decompose-tolerance' | 'decompose-mass' | 'decompose-charge';

/** Arguments a decomposition cannot work with. */
export class DecomposeError extends Error {
  override readonly name = 'DecomposeError';
  constructor(
    readonly code: DecomposeErrorCode,
    message: string,
    options?: { cause?: unknown },
  ) {
    super(message, options);
  }
}

/** Builds a decomposer for the given element ranges. */
export function createDecomposer(options: DecomposerOptions = {}): Decomposer {
  const ranges = options.ranges ?? DEFAULT_RANGES;
  const problem = elementRangesProblem(ranges);
  if (problem) throw new ElementRangesError('ranges-invalid', problem);
  const maxTable = Math.max(1, Math.floor(options.maxTableSize ?? 65536));

  // Prepared bounds for every element (absent elements are fixed at zero).
  const pMin = new Int32Array(NE);
  const pMax = new Int32Array(NE);
  const active: number[] = [];
  ELEMENT_SYMBOLS.forEach((s, i) => {
    const r = ranges[s];
    if (r && r[1] > 0) {
      pMin[i] = r[0];
      pMax[i] = r[1];
      active.push(i);
    }
  });

  const tableEls = chooseTable(active, pMin, pMax, maxTable);
  const outerEls = active
    .filter((i) => !tableEls.includes(i))
    .sort((a, b) => MONO_MASSES[b]! - MONO_MASSES[a]!);
  const table = buildTable(tableEls, pMin, pMax);

  const K = outerEls.length;
  const T = tableEls.length;
  const oEl = Int32Array.from(outerEls);
  const oMass = Float64Array.from(outerEls, (i) => MONO_MASSES[i]!);
  const tEl = Int32Array.from(tableEls);
  const tElMass = Float64Array.from(tableEls, (i) => MONO_MASSES[i]!);
  const { masses: tMass, counts: tCounts, bucketStart, bucketMin, bucketInvWidth } = table;
  const tN = tMass.length;
  const nBuckets = bucketStart.length - 1;

  // Per-call working buffers, allocated once.
  const lo = new Int32Array(NE);
  const hi = new Int32Array(NE);
  const cur = new Int32Array(K);
  const cMax = new Int32Array(K);
  const partial = new Float64Array(K + 1);
  const restMin = new Float64Array(K);
  const restMax = new Float64Array(K);
  const counts = new Int32Array(NE);
  let busy = false;

  /** Enumerates formulas with atom mass in [L, U] within the per-call bounds lo/hi. */
  function enumerate(lower: number, U: number, visit: DecompositionVisitor): number {
    // Every formula weighs at least one H atom: a window reaching down to 0 must not report the empty formula.
    const L = Math.max(lower, 0.5);
    // Table bounds under this call's limits: tighter than the stored extremes when limits cut the table.
    let tMinEff = 0;
    let tMaxEff = 0;
    let filterTable = false;
    for (let j = 0; j < T; j++) {
      const e = tEl[j]!;
      if (lo[e]! > hi[e]!) return 0;
      tMinEff += lo[e]! * tElMass[j]!;
      tMaxEff += hi[e]! * tElMass[j]!;
      if (lo[e]! !== pMin[e]! || hi[e]! !== pMax[e]!) filterTable = true;
    }
    if (tN > 0) {
      if (tMass[0]! > tMinEff) tMinEff = tMass[0]!;
      if (tMass[tN - 1]! < tMaxEff) tMaxEff = tMass[tN - 1]!;
    }
    let sMin = tMinEff;
    let sMax = tMaxEff;
    for (let k = K - 1; k >= 0; k--) {
      const e = oEl[k]!;
      if (lo[e]! > hi[e]!) return 0;
      restMin[k] = sMin;
      restMax[k] = sMax;
      sMin += lo[e]! * oMass[k]!;
      sMax += hi[e]! * oMass[k]!;
    }
    if (sMax < L - EPS || sMin > U + EPS) return 0;

    let found = 0;
    let level = 0;
    partial[0] = 0;
    if (K > 0) {
      setRange(0, L, U);
    }
    for (;;) {
      let pm: number;
      if (K === 0) {
        pm = 0;
      } else {
        if (cur[level]! > cMax[level]!) {
          level--;
          if (level < 0) break;
          cur[level]!++;
          continue;
        }
        pm = partial[level]! + cur[level]! * oMass[level]!;
        if (level < K - 1) {
          partial[level + 1] = pm;
          level++;
          setRange(level, L, U);
          continue;
        }
      }
      // Leaf: an outer combination; look up table entries in [L - pm, U - pm].
      const a = L - pm - EPS;
      const b = U - pm + EPS;
      let i: number;
      const bk = Math.floor((a - bucketMin) * bucketInvWidth);
      if (bk < 0) i = 0;
      else if (bk >= nBuckets) i = bucketStart[nBuckets - 1]!;
      else i = bucketStart[bk]!;
      while (i < tN && tMass[i]! < a) i++;
      for (; i < tN; i++) {
        const tm = tMass[i]!;
        if (tm > b) break;
        const total = pm + tm;
        if (total < L || total > U) continue;
        if (filterTable) {
          let ok = true;
          for (let j = 0; j < T; j++) {
            const c = tCounts[i * T + j]!;
            const e = tEl[j]!;
            if (c < lo[e]! || c > hi[e]!) {
              ok = false;
              break;
            }
          }
          if (!ok) continue;
        }
        // Inactive elements stay 0 from allocation; every active one is written here.
        for (let k = 0; k < K; k++) counts[oEl[k]!] = cur[k]!;
        for (let j = 0; j < T; j++) counts[tEl[j]!] = tCounts[i * T + j]!;
        found++;
        visit(counts, total);
      }
      if (K === 0) break;
      cur[level]!++;
    }
    return found;
  }

  function setRange(k: number, L: number, U: number): void {
    const e = oEl[k]!;
    const m = oMass[k]!;
    const pm = partial[k]!;
    let a = Math.ceil((L - pm - restMax[k]!) / m - EPS);
    let b = Math.floor((U - pm - restMin[k]!) / m + EPS);
    if (a < lo[e]!) a = lo[e]!;
    if (b > hi[e]!) b = hi[e]!;
    cur[k] = a;
    cMax[k] = b;
  }

  // Atom-mass window of the current call, set by prepareCall.
  let winLo = 0;
  let winHi = 0;

  /** Sets lo/hi and the atom-mass window [winLo, winHi] for a call. */
  function prepareCall(mz: number, tol: Tolerance, options: DecomposeOptions): void {
    if (!Number.isFinite(mz) || mz <= 0)
      throw new DecomposeError('decompose-mass', `mass must be > 0, got ${mz}`);
    const tp = toleranceProblem(tol);
    if (tp) throw new DecomposeError('decompose-tolerance', tp);
    const d = toleranceDa(mz, tol);
    for (let e = 0; e < NE; e++) {
      lo[e] = pMin[e]!;
      hi[e] = pMax[e]!;
    }
    const mc = options.maxCounts;
    if (mc) for (let e = 0; e < NE; e++) if ((mc[e] ?? 0) < hi[e]!) hi[e] = mc[e] ?? 0;
    const ion = options.ion;
    if (ion) {
      // M must hold every atom the ion type removes (e.g. the H of [M-H]-).
      for (let e = 0; e < NE; e++) {
        const need = Math.ceil(-ion.delta.counts[e]! / ion.multiplier);
        if (need > lo[e]!) lo[e] = need;
      }
      winLo = neutralMassFromMz(mz - d, ion);
      winHi = neutralMassFromMz(mz + d, ion);
      return;
    }
    const z = options.charge ?? 0;
    if (!Number.isInteger(z))
      throw new DecomposeError('decompose-charge', `charge must be a whole number, got ${z}`);
    const az = Math.abs(z);
    if (z === 0) {
      winLo = mz - d;
      winHi = mz + d;
    } else {
      winLo = (mz - d) * az + z * ELECTRON_MASS;
      winHi = (mz + d) * az + z * ELECTRON_MASS;
    }
  }

  function forEach(
    mz: number,
    tol: Tolerance,
    visit: DecompositionVisitor,
    options: DecomposeOptions = {},
  ): number {
    if (busy) throw new Error('decomposer is not reentrant: do not call it from inside a visitor');
    busy = true;
    try {
      prepareCall(mz, tol, options);
      return enumerate(winLo, winHi, visit);
    } finally {
      busy = false;
    }
  }

  // Result staging for decompose(): counts and atom masses of the formulas kept, grown as needed.
  // Allocated on first use: decomposers used only through forEach() never need them.
  let stageCounts = new Int32Array(0);
  let stageMass = new Float64Array(0);
  let staged = 0;
  let stageFilter: FormulaPredicate | undefined;
  let stageCharge = 0;
  const stage: DecompositionVisitor = (c, atoms) => {
    if (stageFilter && !stageFilter(c, stageCharge)) return;
    if (staged === stageMass.length) {
      const grownCounts = new Int32Array(Math.max(64, stageMass.length * 2) * NE);
      grownCounts.set(stageCounts);
      stageCounts = grownCounts;
      const grownMass = new Float64Array(Math.max(64, stageMass.length * 2));
      grownMass.set(stageMass);
      stageMass = grownMass;
    }
    const base = staged * NE;
    for (let e = 0; e < NE; e++) stageCounts[base + e] = c[e]!;
    stageMass[staged++] = atoms;
  };

  // Sorting buffers for decompose(), grown as needed and reused (typed arrays are costly to create per call).
  let scratch = makeScratch(0);

  function decompose(mz: number, tol: Tolerance, options: DecomposeOptions = {}): Decomposition[] {
    const { ion } = options;
    const z = ion ? 0 : (options.charge ?? 0);
    const az = Math.abs(z);
    staged = 0;
    stageFilter = options.filter;
    stageCharge = z;
    try {
      forEach(mz, tol, stage, options);
    } finally {
      stageFilter = undefined;
    }
    const n = staged;
    if (scratch.theo.length < n) scratch = makeScratch(Math.max(n, 2 * scratch.theo.length));
    const { theo, absErr, order } = scratch;
    for (let i = 0; i < n; i++) {
      const atoms = stageMass[i]!;
      const t = ion ? mzFromNeutralMass(atoms, ion) : z === 0 ? atoms : (atoms - z * ELECTRON_MASS) / az;
      theo[i] = t;
      absErr[i] = Math.abs(mz - t);
    }
    sortByError(absErr, n, scratch);
    const limit = options.limit === undefined ? n : Math.max(0, Math.min(n, Math.floor(options.limit)));
    const out: Decomposition[] = [];
    for (let r = 0; r < limit; r++) {
      const i = order[r]!;
      const counts = copyCounts(stageCounts, i * NE);
      const formula: Formula = { counts, charge: z };
      const t = theo[i]!;
      out.push({ formula, mz: t, ppm: ((mz - t) / t) * 1e6, rdbe: rdbe(formula) });
    }
    return out;
  }

  return { ranges, tableSize: tN, decompose, forEach };
}

/** One-off decomposition (builds a decomposer each time: prepare one with {@link createDecomposer} for many calls). */
export function decomposeMass(
  mz: number,
  tol: Tolerance,
  options: DecomposeOptions & DecomposerOptions = {},
): Decomposition[] {
  return createDecomposer(options).decompose(mz, tol, options);
}

/**
 * Picks the table elements: the subset whose count combinations fill the table best without exceeding
 * about sqrt(space) × 8 entries (capped at `maxTable`) — balancing preparation against per-call work.
 */
function chooseTable(active: number[], pMin: Int32Array, pMax: Int32Array, maxTable: number): number[] {
  const sizes = active.map((e) => pMax[e]! - pMin[e]! + 1);
  const space = sizes.reduce((a, b) => a * b, 1);
  const budget = Math.max(1, Math.min(maxTable, Math.ceil(Math.sqrt(space) * TABLE_FACTOR)));
  let best: number[] = [];
  let bestSize = 1;
  let bestLight = Number.POSITIVE_INFINITY;
  const n = active.length;
  for (let mask = 1; mask < 1 << n; mask++) {
    let size = 1;
    let light = 0;
    const els: number[] = [];
    for (let j = 0; j < n; j++) {
      if (mask & (1 << j)) {
        size *= sizes[j]!;
        light += MONO_MASSES[active[j]!]!;
        els.push(active[j]!);
      }
    }
    if (size > budget) continue;
    // Prefer the bigger table; on a tie, lighter elements (outer loops prune better on heavy ones).
    if (size > bestSize || (size === bestSize && light < bestLight)) {
      best = els;
      bestSize = size;
      bestLight = light;
    }
  }
  return best;
}

interface Table {
  masses: Float64Array;
  counts: Uint16Array;
  bucketStart: Uint32Array;
  bucketMin: number;
  bucketInvWidth: number;
}

/** All count combinations of the table elements, sorted by mass, with a bucket index over the masses. */
function buildTable(els: number[], pMin: Int32Array, pMax: Int32Array): Table {
  const T = els.length;
  let n = 1;
  for (const e of els) n *= pMax[e]! - pMin[e]! + 1;
  const raw = new Float64Array(n);
  const rawCounts = new Uint16Array(n * T);
  const c = els.map((e) => pMin[e]!);
  for (let i = 0; i < n; i++) {
    let m = 0;
    for (let j = 0; j < T; j++) {
      m += c[j]! * MONO_MASSES[els[j]!]!;
      rawCounts[i * T + j] = c[j]!;
    }
    raw[i] = m;
    // Mixed-radix increment.
    for (let j = 0; j < T; j++) {
      if (c[j]! < pMax[els[j]!]!) {
        c[j]!++;
        break;
      }
      c[j] = pMin[els[j]!]!;
    }
  }
  const order = new Uint32Array(n);
  for (let i = 0; i < n; i++) order[i] = i;
  if (n > 1) sortByKey(raw, order, 0, n - 1);
  const masses = new Float64Array(n);
  const counts = new Uint16Array(n * T);
  for (let i = 0; i < n; i++) {
    const o = order[i]!;
    masses[i] = raw[o]!;
    for (let j = 0; j < T; j++) counts[i * T + j] = rawCounts[o * T + j]!;
  }
  const bucketMin = masses[0]!;
  const span = masses[n - 1]! - bucketMin;
  // About two entries per bucket on average.
  const nBuckets = span > 0 ? Math.max(1, Math.ceil(n / 2)) : 1;
  const bucketInvWidth = span > 0 ? nBuckets / span : 0;
  const bucketStart = new Uint32Array(nBuckets + 1);
  let filled = 0;
  for (let i = 0; i < n; i++) {
    const b = Math.min(nBuckets - 1, Math.floor((masses[i]! - bucketMin) * bucketInvWidth));
    while (filled <= b) bucketStart[filled++] = i;
  }
  while (filled <= nBuckets) bucketStart[filled++] = n;
  return { masses, counts, bucketStart, bucketMin, bucketInvWidth };
}

/** A plain array of the NE counts at `base` (an array literal for the usual table size: one packed allocation). */
function copyCounts(src: Int32Array, base: number): number[] {
  if (NE === 9) {
    return [
      src[base]!,
      src[base + 1]!,
      src[base + 2]!,
      src[base + 3]!,
      src[base + 4]!,
      src[base + 5]!,
      src[base + 6]!,
      src[base + 7]!,
      src[base + 8]!,
    ];
  }
  const out: number[] = [];
  for (let e = 0; e < NE; e++) out.push(src[base + e]!);
  return out;
}

interface Scratch {
  theo: Float64Array;
  absErr: Float64Array;
  order: Uint32Array;
  bucket: Uint32Array;
  start: Uint32Array;
}

function makeScratch(capacity: number): Scratch {
  return {
    theo: new Float64Array(capacity),
    absErr: new Float64Array(capacity),
    order: new Uint32Array(capacity),
    bucket: new Uint32Array(capacity),
    start: new Uint32Array(capacity + 1),
  };
}

/**
 * Writes into `scratch.order` the indices 0..n−1 ordered by `keys` ascending. Mass errors spread evenly over
 * the tolerance window, so a bucket pass followed by insertion sort (which then only fixes order within
 * buckets) runs in about O(n).
 */
function sortByError(keys: Float64Array, n: number, scratch: Scratch): void {
  const { order, bucket, start } = scratch;
  if (n < 2) {
    order[0] = 0;
    return;
  }
  let max = 0;
  for (let i = 0; i < n; i++) if (keys[i]! > max) max = keys[i]!;
  const scale = max > 0 ? n / max : 0;
  start.fill(0, 0, n + 1);
  for (let i = 0; i < n; i++) {
    const b = Math.min(n - 1, Math.floor(keys[i]! * scale));
    bucket[i] = b;
    start[b + 1]!++;
  }
  for (let b = 0; b < n; b++) start[b + 1]! += start[b]!;
  for (let i = 0; i < n; i++) order[start[bucket[i]!]!++] = i;
  for (let i = 1; i < n; i++) {
    const v = order[i]!;
    const k = keys[v]!;
    let j = i - 1;
    while (j >= 0 && keys[order[j]!]! > k) {
      order[j + 1] = order[j]!;
      j--;
    }
    order[j + 1] = v;
  }
}

/** Sorts `idx[lo..hi]` by `keys[idx[i]]` ascending (quicksort with insertion sort; no comparator calls). */
function sortByKey(keys: Float64Array, idx: Uint32Array, lo: number, hi: number): void {
  while (hi - lo > 16) {
    const a = keys[idx[lo]!]!;
    const b = keys[idx[(lo + hi) >>> 1]!]!;
    const c = keys[idx[hi]!]!;
    const pivot = Math.max(Math.min(a, b), Math.min(Math.max(a, b), c)); // median of three
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (keys[idx[i]!]! < pivot) i++;
      while (keys[idx[j]!]! > pivot) j--;
      if (i <= j) {
        const t = idx[i]!;
        idx[i] = idx[j]!;
        idx[j] = t;
        i++;
        j--;
      }
    }
    // Recurse into the smaller side, loop on the larger: stack depth stays logarithmic.
    if (j - lo < hi - i) {
      sortByKey(keys, idx, lo, j);
      lo = i;
    } else {
      sortByKey(keys, idx, i, hi);
      hi = j;
    }
  }
  for (let i = lo + 1; i <= hi; i++) {
    const v = idx[i]!;
    const k = keys[v]!;
    let j = i - 1;
    while (j >= lo && keys[idx[j]!]! > k) {
      idx[j + 1] = idx[j]!;
      j--;
    }
    idx[j + 1] = v;
  }
}
