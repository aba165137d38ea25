import { ELECTRON_MASS, ELEMENT_SYMBOLS, type ElementSymbol, elementIndex, MONO_MASSES } from './elements.js';

/**
 * A molecular formula: element counts in {@link ELEMENT_SYMBOLS} order and a net charge.
 * Counts may be negative only for differences (losses computed by {@link subtractFormula}).
 */
export interface Formula {
  readonly counts: readonly number[];
  readonly charge: number;
}

/** Codes of formula parse failures. */
export type FormulaErrorCode = 'formula-empty' | 'formula-unknown-element' | 'formula-syntax';

/** A formula string that cannot be read. */
export class FormulaError extends Error {
  override readonly name = 'FormulaError';
  constructor(
    readonly code: FormulaErrorCode,
    message: string,
    options?: { cause?: unknown },
  ) {
    super(message, options);
  }
}

const N = ELEMENT_SYMBOLS.length;
const C = elementIndex('C');
const H = elementIndex('H');
const NI = elementIndex('N');
const P = elementIndex('P');
const NA = elementIndex('Na');
const K = elementIndex('K');
const CL = elementIndex('Cl');

/** A formula from counts by symbol, e.g. `formulaOf({ C: 6, H: 10, O: 5 })`. */
export function formulaOf(counts: Partial<Record<ElementSymbol, number>>, charge = 0): Formula {
  const out = new Array<number>(N).fill(0);
  for (const [sym, n] of Object.entries(counts)) {
    const i = elementIndex(sym);
    if (i < 0) throw new FormulaError('formula-unknown-element', `unknown element ${sym}`);
    out[i] = n ?? 0;
  }
  return { counts: out, charge };
}

const TOKEN = /([A-Z][a-z]?)(\d*)/y;
const CHARGE = /^(?:([+-])(\d*)|(\d*)([+-])|(\++)|(-+))$/;

/**
 * Parses a formula in Hill or free order with an optional charge suffix:
 * `C6H10O5`, `H2O`, `C15H11O6+`, `C21H20O11-`, `C6H12O6Na+`, `C12H22O11 2+`, `CO2+2`.
 * An element may appear more than once; counts add up.
 */
export function parseFormula(text: string): Formula {
  const s = text.trim();
  if (s.length === 0) throw new FormulaError('formula-empty', 'empty formula');
  const counts = new Array<number>(N).fill(0);
  let pos = 0;
  let seen = 0;
  while (pos < s.length) {
    TOKEN.lastIndex = pos;
    const m = TOKEN.exec(s);
    if (!m) break;
    const idx = elementIndex(m[1]!);
    if (idx < 0) throw new FormulaError('formula-unknown-element', `unknown element "${m[1]}" in "${text}"`);
    counts[idx]! += m[2] ? Number.parseInt(m[2], 10) : 1;
    pos = TOKEN.lastIndex;
    seen++;
  }
  if (seen === 0) throw new FormulaError('formula-syntax', `no element in "${text}"`);
  const rest = s.slice(pos).trim();
  let charge = 0;
  if (rest.length > 0) {
    const m = CHARGE.exec(rest);
    if (!m) throw new FormulaError('formula-syntax', `cannot read "${rest}" in "${text}"`);
    if (m[1]) charge = (m[1] === '+' ? 1 : -1) * (m[2] ? Number.parseInt(m[2], 10) : 1);
    else if (m[4]) charge = (m[4] === '+' ? 1 : -1) * (m[3] ? Number.parseInt(m[3], 10) : 1);
    else if (m[5]) charge = m[5].length;
    else if (m[6]) charge = -m[6].length;
  }
  return { counts, charge };
}

/** Hill order: C first, then H, then the rest alphabetically; without carbon, all alphabetically. */
const HILL_WITH_C = [C, H, ...ELEMENT_SYMBOLS.map((_, i) => i).filter((i) => i !== C && i !== H)].sort(
  (a, b) =>
    a === C
      ? -1
      : b === C
        ? 1
        : a === H
          ? -1
          : b === H
            ? 1
            : ELEMENT_SYMBOLS[a]!.localeCompare(ELEMENT_SYMBOLS[b]!),
);
const HILL_NO_C = ELEMENT_SYMBOLS.map((_, i) => i).sort((a, b) =>
  ELEMENT_SYMBOLS[a]!.localeCompare(ELEMENT_SYMBOLS[b]!),
);

// Symbol-and-count pieces ('C', 'C2', …) written once, so formatting many formulas converts no numbers.
const SYMBOL_COUNT_TEXT = ELEMENT_SYMBOLS.map((sym) =>
  Array.from({ length: 256 }, (_, n) => (n === 1 ? sym : sym + String(n))),
);

/**
 * Formats a formula in Hill order with a charge suffix: `C15H11O6+`, `C21H19O11-`; charges above one are
 * written sign first (`C6H14O6+2`) because `C6H14O62+` would read as O62.
 */
export function formatFormula(f: { readonly counts: ArrayLike<number>; readonly charge: number }): string {
  const order = f.counts[C] !== 0 ? HILL_WITH_C : HILL_NO_C;
  let out = '';
  for (let k = 0; k < order.length; k++) {
    const i = order[k]!;
    const n = f.counts[i]!;
    if (n === 0) continue;
    const texts = SYMBOL_COUNT_TEXT[i]!;
    out += n > 0 && n < texts.length ? texts[n]! : ELEMENT_SYMBOLS[i]! + String(n);
  }
  return out + formatCharge(f.charge);
}

function formatCharge(z: number): string {
  if (z === 0) return '';
  const sign = z > 0 ? '+' : '-';
  return Math.abs(z) === 1 ? sign : sign + String(Math.abs(z));
}

/** Sum of two formulas (charges add). */
export function addFormula(a: Formula, b: Formula): Formula {
  return { counts: a.counts.map((n, i) => n + b.counts[i]!), charge: a.charge + b.charge };
}

/** Difference a − b (charges subtract); counts may go negative. */
export function subtractFormula(a: Formula, b: Formula): Formula {
  return { counts: a.counts.map((n, i) => n - b.counts[i]!), charge: a.charge - b.charge };
}

/** A formula times a whole number. */
export function scaleFormula(a: Formula, k: number): Formula {
  return { counts: a.counts.map((n) => n * k), charge: a.charge * k };
}

/** Whether every element count of `sub` is at most that of `sup` (charge ignored). */
export function isSubformula(sub: Formula, sup: Formula): boolean {
  for (let i = 0; i < N; i++) if (sub.counts[i]! > sup.counts[i]!) return false;
  return true;
}

/** Whether no count is negative. */
export function isNonNegative(f: Formula): boolean {
  return f.counts.every((n) => n >= 0);
}

/** Whether two formulas have the same counts and charge. */
export function formulaEquals(a: Formula, b: Formula): boolean {
  return a.charge === b.charge && a.counts.every((n, i) => n === b.counts[i]);
}

/** Monoisotopic mass of the neutral atoms (no electron correction). */
export function neutralMass(f: Formula): number {
  let m = 0;
  for (let i = 0; i < N; i++) m += f.counts[i]! * MONO_MASSES[i]!;
  return m;
}

/** Monoisotopic mass with the electron correction: atoms minus charge × electron mass. */
export function monoisotopicMass(f: Formula): number {
  return neutralMass(f) - f.charge * ELECTRON_MASS;
}

/** m/z of a charged formula (monoisotopic mass over |charge|); the plain mass when neutral. */
export function formulaMz(f: Formula): number {
  const m = monoisotopicMass(f);
  return f.charge === 0 ? m : m / Math.abs(f.charge);
}

/**
 * Ring and double-bond equivalents: 1 + Σ nᵢ(vᵢ − 2)/2 over atoms, with the valences of the
 * element table. Half-integers mean an even-electron ion (or a radical when neutral).
 */
export function rdbe(f: Formula): number {
  // C valence 4, N/P 3, H/halogen/alkali 1, O/S 2: RDBE = C − (H + X + alkali)/2 + (N + P)/2 + 1.
  const c = f.counts;
  const monovalent = c[H]! + c[NA]! + c[K]! + c[CL]!;
  return c[C]! - monovalent / 2 + (c[NI]! + c[P]!) / 2 + 1;
}
