import { ELEMENT_SYMBOLS, type ElementSymbol, elementIndex } from './elements.js';
import type { Formula } from './formula.js';

/** Inclusive count ranges per element; an element left out may not occur. */
export type ElementRanges = Partial<Record<ElementSymbol, readonly [min: number, max: number]>>;

/** Default search space for natural products: C0-60 H0-120 N0-10 O0-30 P0-4 S0-4 (Na, K, Cl on request). */
export const DEFAULT_RANGES: ElementRanges = Object.freeze({
  C: [0, 60],
  H: [0, 120],
  N: [0, 10],
  O: [0, 30],
  P: [0, 4],
  S: [0, 4],
});

/** Largest count an element range may reach (counts are stored in 16 bits in decomposition tables). */
export const MAX_ELEMENT_COUNT = 65535;

/** Codes of element-range problems. */
export type ElementRangesErrorCode = 'ranges-syntax' | 'ranges-unknown-element' | 'ranges-invalid';

/** An element-range specification that cannot be used. */
export class ElementRangesError extends Error {
  override readonly name = 'ElementRangesError';
  constructor(
    readonly code: ElementRangesErrorCode,
    message: string,
    options?: { cause?: unknown },
  ) {
    super(message, options);
  }
}

const ITEM = /^([A-Z][a-z]?)(\d+)(?:-(\d+))?$/;

/**
 * Reads element ranges written as space- or comma-separated items: `C0-60 H0-120 N0-10 O0-30 P0-4 S0-4`;
 * `Na0-1`; a single number fixes the count (`P1` is exactly one phosphorus).
 */
export function parseElementRanges(text: string): ElementRanges {
  const items = text
    .split(/[\s,]+/)
    .map((s) => s.trim())
    .filter((s) => s.length > 0);
  if (items.length === 0) throw new ElementRangesError('ranges-syntax', 'no element ranges given');
  const out: Record<string, readonly [number, number]> = {};
  for (const item of items) {
    const m = ITEM.exec(item);
    if (!m) {
      throw new ElementRangesError('ranges-syntax', `cannot read "${item}" (expected e.g. C0-60 or P1)`);
    }
    const sym = m[1]!;
    if (elementIndex(sym) < 0)
      throw new ElementRangesError('ranges-unknown-element', `unknown element "${sym}"`);
    if (sym in out) throw new ElementRangesError('ranges-invalid', `element ${sym} given twice`);
    const min = Number.parseInt(m[2]!, 10);
    const max = m[3] === undefined ? min : Number.parseInt(m[3], 10);
    out[sym] = [min, max];
  }
  const ranges = out as ElementRanges;
  const problem = elementRangesProblem(ranges);
  if (problem) throw new ElementRangesError('ranges-invalid', problem);
  return ranges;
}

/** Writes element ranges in the form {@link parseElementRanges} reads, in element-table order. */
export function formatElementRanges(ranges: ElementRanges): string {
  return ELEMENT_SYMBOLS.filter((s) => ranges[s] !== undefined)
    .map((s) => {
      const [a, b] = ranges[s]!;
      return a === b ? `${s}${a}` : `${s}${a}-${b}`;
    })
    .join(' ');
}

/** The first problem with a set of ranges (negative, fractional, reversed, too large), or undefined. */
export function elementRangesProblem(ranges: ElementRanges): string | undefined {
  for (const [sym, r] of Object.entries(ranges)) {
    if (elementIndex(sym) < 0) return `unknown element "${sym}"`;
    if (!r) continue;
    const [a, b] = r;
    if (!Number.isInteger(a) || !Number.isInteger(b) || a < 0 || b < 0) {
      return `range of ${sym} must be whole numbers ≥ 0, got ${a}-${b}`;
    }
    if (a > b) return `range of ${sym} is reversed: ${a}-${b}`;
    if (b > MAX_ELEMENT_COUNT) return `range of ${sym} exceeds ${MAX_ELEMENT_COUNT}`;
  }
  return undefined;
}

/** Ranges 0..n for every element of a formula: the space of its sub-formulas (fragments of a precursor). */
export function rangesFromFormula(f: Formula): ElementRanges {
  const out: Record<string, readonly [number, number]> = {};
  ELEMENT_SYMBOLS.forEach((s, i) => {
    const n = f.counts[i]!;
    if (n > 0) out[s] = [0, n];
  });
  return out as ElementRanges;
}
