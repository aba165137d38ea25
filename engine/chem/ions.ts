import { ELECTRON_MASS, ELEMENT_SYMBOLS } from './elements.js';
import { type Formula, FormulaError, neutralMass, parseFormula } from './formula.js';

/** Ion polarity. */
export type Polarity = 'positive' | 'negative';

/**
 * An ion type: how a neutral molecule M becomes the ion seen in the spectrum.
 * The ion's atoms are `multiplier × M + delta`; its charge is `charge`.
 */
export interface IonType {
  /** Name in bracket notation, e.g. `[M+H]+`. */
  readonly name: string;
  /** Signed charge of the ion. */
  readonly charge: number;
  readonly polarity: Polarity;
  /** How many molecules M the ion holds (1 for `[M+H]+`, 2 for `[2M+H]+`). */
  readonly multiplier: number;
  /** Atoms added (positive counts) or removed (negative counts), as a neutral formula delta. */
  readonly delta: Formula;
  /** Mass of the atoms of `delta` (no electron correction). */
  readonly deltaMass: number;
}

/** Codes of ion-type parse failures. */
export type IonTypeErrorCode = 'ion-syntax' | 'ion-charge' | 'ion-formula';

/** An ion-type string that cannot be read. */
export class IonTypeError extends Error {
  override readonly name = 'IonTypeError';
  constructor(
    readonly code: IonTypeErrorCode,
    message: string,
    options?: { cause?: unknown },
  ) {
    super(message, options);
  }
}

const ION = /^\[(\d*)M((?:[+-]\d*[A-Z][A-Za-z0-9]*)*)\](\d*)([+-])$/;
const TERM = /([+-])(\d*)([A-Z][A-Za-z0-9]*)/g;

/**
 * Parses an ion type in bracket notation: `[M+H]+`, `[M-H]-`, `[M+2H]2+`, `[2M+Na]+`, `[M-H2O+H]+`,
 * `[M+HCOO]-`, `[M]+` (the molecule is itself the ion, e.g. a flavylium cation). Whitespace and the
 * typographic minus (U+2212) are accepted. The atoms of each term are read as a formula in free order.
 */
export function parseIonType(text: string): IonType {
  const s = text.replace(/\s+/g, '').replace(/\u2212/g, '-');
  const m = ION.exec(s);
  if (!m)
    throw new IonTypeError('ion-syntax', `cannot read ion type "${text}" (expected e.g. [M+H]+ or [M-2H]2-)`);
  const multiplier = m[1] ? Number.parseInt(m[1], 10) : 1;
  if (!(multiplier >= 1))
    throw new IonTypeError('ion-syntax', `molecule count must be at least 1 in "${text}"`);
  const size = m[3] ? Number.parseInt(m[3], 10) : 1;
  if (!(size >= 1)) throw new IonTypeError('ion-charge', `charge must not be zero in "${text}"`);
  const charge = (m[4] === '+' ? 1 : -1) * size;
  const counts = new Array<number>(ELEMENT_SYMBOLS.length).fill(0);
  for (const t of (m[2] ?? '').matchAll(TERM)) {
    const sign = t[1] === '+' ? 1 : -1;
    const k = t[2] ? Number.parseInt(t[2], 10) : 1;
    let part: Formula;
    try {
      part = parseFormula(t[3]!);
    } catch (err) {
      if (err instanceof FormulaError) {
        throw new IonTypeError('ion-formula', `cannot read "${t[3]}" in ion type "${text}": ${err.message}`, {
          cause: err,
        });
      }
      throw err;
    }
    for (let i = 0; i < counts.length; i++) counts[i]! += sign * k * part.counts[i]!;
  }
  const delta: Formula = { counts, charge: 0 };
  return {
    name: canonicalName(multiplier, m[2] ?? '', size, m[4]!),
    charge,
    polarity: charge > 0 ? 'positive' : 'negative',
    multiplier,
    delta,
    deltaMass: neutralMass(delta),
  };
}

function canonicalName(multiplier: number, terms: string, size: number, sign: string): string {
  return `[${multiplier === 1 ? '' : multiplier}M${terms}]${size === 1 ? '' : size}${sign}`;
}

/** The ion types Peel knows by name (ESI adducts common for glycosylated natural products). */
export const ION_TYPES: readonly IonType[] = [
  '[M]+',
  '[M+H]+',
  '[M+Na]+',
  '[M+K]+',
  '[M+NH4]+',
  '[M+2H]2+',
  '[M+H+Na]2+',
  '[2M+H]+',
  '[2M+Na]+',
  '[M-H2O+H]+',
  '[M]-',
  '[M-H]-',
  '[M+HCOO]-',
  '[M+CH3COO]-',
  '[M+Cl]-',
  '[M-2H]2-',
  '[2M-H]-',
  '[M-H2O-H]-',
].map(parseIonType);

const BY_NAME = new Map<string, IonType>(ION_TYPES.map((t) => [t.name, t]));

/** A known ion type by its name (`[M+H]+`), or undefined; whitespace and U+2212 minus are ignored. */
export function ionType(name: string): IonType | undefined {
  return BY_NAME.get(name.replace(/\s+/g, '').replace(/\u2212/g, '-'));
}

/** A known ion type by name, or any other ion type read from bracket notation. */
export function resolveIonType(name: string): IonType {
  return ionType(name) ?? parseIonType(name);
}

/**
 * The charged formula of the ion: `multiplier × M + delta` with the ion's charge; e.g. C21H20O11 with
 * `[M+H]+` is C21H21O11+. For `[M]+` the formula given already holds the cation's atoms (C15H11O6 → C15H11O6+).
 * Counts may go negative when the ion removes atoms M lacks; check with {@link isNonNegative}.
 */
export function ionFormula(neutral: Formula, ion: IonType): Formula {
  const counts = neutral.counts.map((n, i) => n * ion.multiplier + ion.delta.counts[i]!);
  return { counts, charge: ion.charge };
}

/** The m/z of the ion of a neutral formula, electron-corrected. */
export function ionMz(neutral: Formula, ion: IonType): number {
  return mzFromNeutralMass(neutralMass(neutral), ion);
}

/** The m/z of an ion from the neutral monoisotopic mass of M (hot-path form of {@link ionMz}). */
export function mzFromNeutralMass(mass: number, ion: IonType): number {
  const z = ion.charge;
  return (mass * ion.multiplier + ion.deltaMass - z * ELECTRON_MASS) / Math.abs(z);
}

/** The neutral monoisotopic mass of M from an observed m/z of the given ion type. */
export function neutralMassFromMz(mz: number, ion: IonType): number {
  const z = ion.charge;
  return (mz * Math.abs(z) + z * ELECTRON_MASS - ion.deltaMass) / ion.multiplier;
}
