/**
 * Plausibility filters for candidate formulas, each one switchable:
 *
 * - RDBE: ring and double-bond equivalents at least a minimum, and the electron state. With the element
 *   table's valences, 2·RDBE − z is even exactly when the species has an even number of electrons (each
 *   element's atomic number has the parity of its valence). So a neutral molecule has an integer RDBE, an
 *   even-electron ion of charge ±1 a half-integer one ([M+H]+, [M-H]-, a flavylium [M]+), and an odd-electron
 *   (radical) ion of charge ±1 an integer one (the [Y0-H]-• of flavonol glycosides).
 * - SENIOR's graph rules (Senior 1951, as used in rule 2 of Kind & Fiehn 2007, BMC Bioinformatics 8:105):
 *   the sum of valences is at least twice the largest valence, and at least twice (atoms − 1) — relaxed by |z|
 *   for ions, whose charged atom carries one valence more or less. SENIOR's parity rule is the electron-state
 *   check above, so it is switched with `rdbe.electrons`.
 * - Element ratios of Kind & Fiehn 2007 (rule 4 H/C, rule 5 heteroatom/C) in their "common" (99.7 % of
 *   known compounds) or "extended" range, and rule 6, the multi-element (HNOPS) count check.
 */
import { ELEMENT_SYMBOLS, ELEMENTS, elementIndex } from './elements.js';
import type { Formula } from './formula.js';

/** Keeps a formula (element counts in element-table order, signed charge) when it returns true. */
export type FormulaPredicate = (counts: ArrayLike<number>, charge: number) => boolean;

/** Expected electron state: even (closed shell, the rule for ESI ions and molecules), odd (radicals), any. */
export type ElectronState = 'even' | 'odd' | 'any';

/** The RDBE rule. */
export interface RdbeRule {
  /** Smallest RDBE allowed. @defaultValue 0 for neutral formulas, −|z|/2 for ions (a protonated alkane: −0.5) */
  readonly min?: number;
  /** Largest RDBE allowed. @defaultValue no limit */
  readonly max?: number;
  /** Electron state the formula must have. @defaultValue 'even' */
  readonly electrons?: ElectronState;
}

/** Which filters run; each may be switched off with `false`. */
export interface FormulaFilterOptions {
  /** RDBE minimum and electron state. @defaultValue `{ electrons: 'even' }` */
  readonly rdbe?: RdbeRule | false;
  /** SENIOR's valence-sum rules. @defaultValue true */
  readonly senior?: boolean;
  /** Kind & Fiehn element-ratio range. @defaultValue 'common' */
  readonly ratios?: 'common' | 'extended' | false;
  /** Kind & Fiehn multi-element (HNOPS) count check. @defaultValue true */
  readonly elementCounts?: boolean;
}

/** Every filter off. */
export const NO_FILTERS: FormulaFilterOptions = Object.freeze({
  rdbe: false,
  senior: false,
  ratios: false,
  elementCounts: false,
});

/** Why a formula was filtered out. */
export type FilterCode =
  | 'rdbe-min'
  | 'rdbe-max'
  | 'electron-state'
  | 'senior-max-valence'
  | 'senior-connectivity'
  | 'ratio-no-carbon'
  | 'ratio-h-c'
  | 'ratio-n-c'
  | 'ratio-o-c'
  | 'ratio-p-c'
  | 'ratio-s-c'
  | 'ratio-cl-c'
  | 'element-counts';

/** Ratio limits to carbon: [min, max] per element. */
export type RatioLimits = Readonly<
  Partial<Record<'H' | 'N' | 'O' | 'P' | 'S' | 'Cl', readonly [number, number]>>
>;

/**
 * Element-ratio ranges of Kind & Fiehn 2007, BMC Bioinformatics 8:105 (rules 4 and 5). H/C 0.2–3.1 common is
 * the published value cited in REFERENCE.md §5; the other limits are from memory of the paper's table.
 */
export const KIND_FIEHN_RATIOS: Readonly<{ common: RatioLimits; extended: RatioLimits }> = Object.freeze({
  common: { H: [0.2, 3.1], N: [0, 1.3], O: [0, 1.2], P: [0, 0.3], S: [0, 0.8], Cl: [0, 0.8] },
  extended: { H: [0.1, 6], N: [0, 4], O: [0, 3], P: [0, 2], S: [0, 3], Cl: [0, 2] },
});

/**
 * Multi-element count limits of Kind & Fiehn 2007, rule 6 (from memory of the paper's table): when every
 * listed element exceeds `above`, each must stay below its limit.
 */
export const KIND_FIEHN_ELEMENT_COUNTS: readonly {
  readonly above: number;
  readonly below: Readonly<Partial<Record<'N' | 'O' | 'P' | 'S', number>>>;
}[] = Object.freeze([
  { above: 1, below: { N: 10, O: 20, P: 4, S: 3 } },
  { above: 3, below: { N: 11, O: 22, P: 6 } },
  { above: 1, below: { O: 14, P: 3, S: 3 } },
  { above: 1, below: { P: 3, S: 3, N: 4 } },
  { above: 6, below: { N: 19, O: 14, S: 8 } },
]);

const C = elementIndex('C');
const H = elementIndex('H');
const N = elementIndex('N');
const P = elementIndex('P');
const NA = elementIndex('Na');
const K = elementIndex('K');
const CL = elementIndex('Cl');
const NE = ELEMENT_SYMBOLS.length;
const VALENCE = Int32Array.from(ELEMENTS, (e) => e.valence);
const RATIO_CODES = {
  H: 'ratio-h-c',
  N: 'ratio-n-c',
  O: 'ratio-o-c',
  P: 'ratio-p-c',
  S: 'ratio-s-c',
  Cl: 'ratio-cl-c',
} as const;

interface Compiled {
  rdbe: boolean;
  rdbeMin: number | undefined;
  rdbeMax: number;
  electrons: ElectronState;
  senior: boolean;
  ratios: { el: number; min: number; max: number; code: FilterCode }[] | undefined;
  counts: { above: number; els: Int32Array; limits: Int32Array }[] | undefined;
}

function compile(options: FormulaFilterOptions): Compiled {
  const r = options.rdbe === undefined ? {} : options.rdbe;
  const ratioSet = options.ratios === undefined ? 'common' : options.ratios;
  const limits = ratioSet ? KIND_FIEHN_RATIOS[ratioSet] : undefined;
  return {
    rdbe: r !== false,
    rdbeMin: r === false ? undefined : r.min,
    rdbeMax: r === false ? Number.POSITIVE_INFINITY : (r.max ?? Number.POSITIVE_INFINITY),
    electrons: r === false ? 'any' : (r.electrons ?? 'even'),
    senior: options.senior ?? true,
    ratios: limits
      ? Object.entries(limits).map(([sym, lim]) => ({
          el: elementIndex(sym),
          min: lim![0],
          max: lim![1],
          code: RATIO_CODES[sym as keyof typeof RATIO_CODES] as FilterCode,
        }))
      : undefined,
    counts:
      (options.elementCounts ?? true)
        ? KIND_FIEHN_ELEMENT_COUNTS.map((rule) => {
            const entries = Object.entries(rule.below);
            return {
              above: rule.above,
              els: Int32Array.from(entries, ([s]) => elementIndex(s)),
              limits: Int32Array.from(entries, ([, v]) => v!),
            };
          })
        : undefined,
  };
}

/** Runs the checks; pushes every failure into `out` when given, else stops at the first (no allocation). */
function check(c: ArrayLike<number>, z: number, cfg: Compiled, out: FilterCode[] | undefined): boolean {
  const az = z < 0 ? -z : z;
  if (cfg.rdbe) {
    // 2·RDBE = 2·C − (H + Na + K + Cl) + (N + P) + 2, with the element table's lowest valences.
    const twice = 2 * c[C]! - (c[H]! + c[NA]! + c[K]! + c[CL]!) + c[N]! + c[P]! + 2;
    const min = cfg.rdbeMin ?? -az / 2;
    if (twice < 2 * min) {
      if (!out) return false;
      out.push('rdbe-min');
    }
    if (twice > 2 * cfg.rdbeMax) {
      if (!out) return false;
      out.push('rdbe-max');
    }
    if (cfg.electrons !== 'any' && (((twice - z) & 1) !== 0) !== (cfg.electrons === 'odd')) {
      if (!out) return false;
      out.push('electron-state');
    }
  }
  if (cfg.senior) {
    let sum = 0;
    let atoms = 0;
    let maxV = 0;
    for (let e = 0; e < NE; e++) {
      const n = c[e]!;
      if (n === 0) continue;
      const v = VALENCE[e]!;
      sum += n * v;
      atoms += n;
      if (v > maxV) maxV = v;
    }
    if (sum < 2 * maxV) {
      if (!out) return false;
      out.push('senior-max-valence');
    }
    if (sum < 2 * (atoms - 1) - az) {
      if (!out) return false;
      out.push('senior-connectivity');
    }
  }
  if (cfg.ratios) {
    const nc = c[C]!;
    if (nc <= 0) {
      if (!out) return false;
      out.push('ratio-no-carbon');
    } else {
      for (const r of cfg.ratios) {
        const q = c[r.el]! / nc;
        if (q < r.min || q > r.max) {
          if (!out) return false;
          out.push(r.code);
        }
      }
    }
  }
  if (cfg.counts) {
    for (const rule of cfg.counts) {
      let all = true;
      let bad = false;
      for (let j = 0; j < rule.els.length; j++) {
        const n = c[rule.els[j]!]!;
        if (n <= rule.above) all = false;
        if (n >= rule.limits[j]!) bad = true;
      }
      if (all && bad) {
        if (!out) return false;
        if (!out.includes('element-counts')) out.push('element-counts');
      }
    }
  }
  return out ? out.length === 0 : true;
}

/** A fast predicate for the chosen filters (no allocation per call), for decomposition hot paths. */
export function createFormulaFilter(options: FormulaFilterOptions = {}): FormulaPredicate {
  const cfg = compile(options);
  return (counts, charge) => check(counts, charge, cfg, undefined);
}

/** Every filter a formula fails (empty when it passes), for explaining why a formula was dropped. */
export function formulaProblems(f: Formula, options: FormulaFilterOptions = {}): FilterCode[] {
  const out: FilterCode[] = [];
  check(f.counts, f.charge, compile(options), out);
  return out;
}

/** Whether a formula passes the chosen filters. */
export function isPlausibleFormula(f: Formula, options: FormulaFilterOptions = {}): boolean {
  return check(f.counts, f.charge, compile(options), undefined);
}

/** Electron state of a formula from its RDBE and charge: 'odd' for radicals, 'even' otherwise. */
export function electronState(f: Formula): 'even' | 'odd' {
  const c = f.counts;
  const twice = 2 * c[C]! - (c[H]! + c[NA]! + c[K]! + c[CL]!) + c[N]! + c[P]! + 2;
  return ((twice - f.charge) & 1) === 0 ? 'even' : 'odd';
}
