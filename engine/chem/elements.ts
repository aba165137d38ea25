/**
 * Element table: monoisotopic masses and isotope abundances.
 *
 * Masses: NIST "Atomic Weights and Isotopic Compositions" (AME-derived relative atomic masses).
 * Abundances: NIST representative isotopic compositions (mole fractions).
 * Electron mass: CODATA 2018 recommended value.
 */

/** One isotope of an element. */
export interface Isotope {
  readonly massNumber: number;
  readonly mass: number;
  readonly abundance: number;
}

/** One element of the table. */
export interface Element {
  readonly symbol: ElementSymbol;
  /** Most common valence, used by the RDBE and SENIOR checks. */
  readonly valence: number;
  /** Isotopes, most abundant (the monoisotopic one for every element here) first. */
  readonly isotopes: readonly Isotope[];
  /** Mass of the monoisotopic (lightest stable, here also most abundant) isotope. */
  readonly monoisotopicMass: number;
}

/** Element symbols the engine knows, in the fixed order of formula count vectors. */
export const ELEMENT_SYMBOLS = ['C', 'H', 'N', 'O', 'P', 'S', 'Na', 'K', 'Cl'] as const;
/** A known element symbol. */
export type ElementSymbol = (typeof ELEMENT_SYMBOLS)[number];

/** Electron rest mass in u (CODATA 2018). */
export const ELECTRON_MASS = 0.000548579909065;

/** Proton mass used for adduct shifts: ¹H atom minus one electron. */
export const PROTON_MASS = 1.00782503223 - ELECTRON_MASS;

const iso = (massNumber: number, mass: number, abundance: number): Isotope => ({
  massNumber,
  mass,
  abundance,
});

const TABLE: Record<ElementSymbol, { valence: number; isotopes: Isotope[] }> = {
  // NIST AME masses and representative mole fractions.
  C: { valence: 4, isotopes: [iso(12, 12, 0.9893), iso(13, 13.00335483507, 0.0107)] },
  H: { valence: 1, isotopes: [iso(1, 1.00782503223, 0.999885), iso(2, 2.01410177812, 0.000115)] },
  N: { valence: 3, isotopes: [iso(14, 14.00307400443, 0.99636), iso(15, 15.00010889888, 0.00364)] },
  O: {
    valence: 2,
    isotopes: [
      iso(16, 15.99491461957, 0.99757),
      iso(17, 16.9991317565, 0.00038),
      iso(18, 17.99915961286, 0.00205),
    ],
  },
  P: { valence: 3, isotopes: [iso(31, 30.97376199842, 1)] },
  S: {
    valence: 2,
    isotopes: [
      iso(32, 31.9720711744, 0.9499),
      iso(33, 32.9714589098, 0.0075),
      iso(34, 33.967867004, 0.0425),
      iso(36, 35.96708071, 0.0001),
    ],
  },
  Na: { valence: 1, isotopes: [iso(23, 22.989769282, 1)] },
  K: {
    valence: 1,
    isotopes: [
      iso(39, 38.9637064864, 0.932581),
      iso(40, 39.963998166, 0.000117),
      iso(41, 40.9618252579, 0.067302),
    ],
  },
  Cl: { valence: 1, isotopes: [iso(35, 34.968852682, 0.7576), iso(37, 36.965902602, 0.2424)] },
};

/** The element table in {@link ELEMENT_SYMBOLS} order. */
export const ELEMENTS: readonly Element[] = ELEMENT_SYMBOLS.map((symbol) => {
  const { valence, isotopes } = TABLE[symbol];
  return { symbol, valence, isotopes, monoisotopicMass: isotopes[0]!.mass };
});

/** Monoisotopic masses in {@link ELEMENT_SYMBOLS} order, for hot loops. */
export const MONO_MASSES: readonly number[] = ELEMENTS.map((e) => e.monoisotopicMass);

const INDEX = new Map<string, number>(ELEMENT_SYMBOLS.map((s, i) => [s, i]));

/** Index of an element symbol in count vectors, or -1 when unknown. */
export function elementIndex(symbol: string): number {
  return INDEX.get(symbol) ?? -1;
}

/** Whether a string is a known element symbol. */
export function isElementSymbol(symbol: string): symbol is ElementSymbol {
  return INDEX.has(symbol);
}
