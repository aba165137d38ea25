import { ELEMENT_SYMBOLS, MONO_MASSES } from '../chem/elements.js';
import { type Formula, formatFormula } from '../chem/formula.js';

/** Element counts in element-table order, as the hot paths use them. */
export type Counts = Int32Array;

/** Number of elements in a count vector. */
export const NE = ELEMENT_SYMBOLS.length;

// Bits per element in a formula key (C, H, N, O, P, S, Na, K, Cl): 41 bits, plus 4 for the charge, < 2^53.
const BITS = [8, 9, 5, 7, 3, 3, 2, 2, 2];
const LIMIT = BITS.map((b) => 2 ** b);

/** Counts of a formula. */
export function countsOf(f: Formula): Counts {
  return Int32Array.from(f.counts);
}

/** Mass of the atoms (no electron correction). */
export function countsMass(c: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < NE; i++) m += c[i]! * MONO_MASSES[i]!;
  return m;
}

/**
 * A number that identifies a formula with its charge (exact, collision-free within the element limits);
 * NaN when a count is negative or beyond the limits (such a formula is in no table).
 */
export function formulaKey(c: ArrayLike<number>, charge = 0): number {
  let k = 0;
  for (let i = 0; i < NE; i++) {
    const n = c[i]!;
    if (n < 0 || n >= LIMIT[i]!) return Number.NaN;
    k = k * LIMIT[i]! + n;
  }
  return k * 16 + (charge + 8);
}

/** a − b into a new vector. */
export function subCounts(a: ArrayLike<number>, b: ArrayLike<number>): Counts {
  const out = new Int32Array(NE);
  for (let i = 0; i < NE; i++) out[i] = a[i]! - b[i]!;
  return out;
}

/** a + k·b into a new vector. */
export function addCounts(a: ArrayLike<number>, b: ArrayLike<number>, k = 1): Counts {
  const out = new Int32Array(NE);
  for (let i = 0; i < NE; i++) out[i] = a[i]! + k * b[i]!;
  return out;
}

/** Whether every count of `sub` is at most that of `sup`. */
export function isSubCounts(sub: ArrayLike<number>, sup: ArrayLike<number>): boolean {
  for (let i = 0; i < NE; i++) if (sub[i]! > sup[i]!) return false;
  return true;
}

/** Whether no count is negative. */
export function nonNegative(c: ArrayLike<number>): boolean {
  for (let i = 0; i < NE; i++) if (c[i]! < 0) return false;
  return true;
}

/** Hill-order string of counts with a charge. */
export function countsString(c: ArrayLike<number>, charge = 0): string {
  return formatFormula({ counts: c, charge });
}

/** Ring and double-bond equivalents of counts (C − (H+Na+K+Cl)/2 + (N+P)/2 + 1). */
export function countsRdbe(c: ArrayLike<number>): number {
  return c[0]! - (c[1]! + c[6]! + c[7]! + c[8]!) / 2 + (c[2]! + c[4]!) / 2 + 1;
}
