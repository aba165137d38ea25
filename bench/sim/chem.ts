/**
 * Formula helpers of the simulator on top of the engine's formula core (parsing and the electron-corrected
 * masses of REFERENCE.md §1), plus the isotope ratios the simulated spectra need.
 */
import { ELEMENTS } from '../../engine/chem/elements.js';
import {
  addFormula,
  type Formula,
  formatFormula,
  formulaMz,
  neutralMass,
  parseFormula,
  scaleFormula,
  subtractFormula,
} from '../../engine/chem/formula.js';

export type { Formula };
export { addFormula, formatFormula, formulaMz, neutralMass, scaleFormula, subtractFormula };

/** a − b, keeping a's charge (removing a neutral part). */
export function subtract(a: Formula, b: Formula): Formula {
  return { counts: a.counts.map((n, i) => n - b.counts[i]!), charge: a.charge };
}

const CACHE = new Map<string, Formula>();

/** A parsed formula, cached (tables are parsed once). */
export function f(text: string): Formula {
  let v = CACHE.get(text);
  if (!v) {
    v = parseFormula(text);
    CACHE.set(text, v);
  }
  return v;
}

/** Sum of any number of formulas. */
export function sum(...parts: Formula[]): Formula {
  let out = parts[0] ?? f('H0');
  for (let i = 1; i < parts.length; i++) out = addFormula(out, parts[i]!);
  return out;
}

/** The same counts with another net charge. */
export function withCharge(x: Formula, charge: number): Formula {
  return { counts: x.counts, charge };
}

/** Whether no element count is negative and at least one atom is present. */
export function isValid(x: Formula): boolean {
  let any = false;
  for (const n of x.counts) {
    if (n < 0) return false;
    if (n > 0) any = true;
  }
  return any;
}

/** A key for maps: Hill formula with charge. */
export function key(x: Formula): string {
  return formatFormula(x);
}

/** Carbon count. */
export function carbons(x: Formula): number {
  return x.counts[0]!;
}

// Per-element isotope ratios relative to the monoisotopic isotope, from the engine's NIST table.
const RATIOS = ELEMENTS.map((e) => {
  const base = e.isotopes[0]!;
  const out: { shift: number; ratio: number; nominal: number }[] = [];
  for (const iso of e.isotopes.slice(1)) {
    out.push({
      shift: iso.mass - base.mass,
      ratio: iso.abundance / base.abundance,
      nominal: iso.massNumber - base.massNumber,
    });
  }
  return out;
});

/** The M+1 and M+2 peaks of a formula relative to its monoisotopic peak, with their mass shifts (u). */
export interface IsotopeRatios {
  m1: number;
  m1Shift: number;
  m2: number;
  m2Shift: number;
}

/**
 * Relative abundances of the M+1 and M+2 isotope peaks (to second order in the heavy-isotope ratios, which
 * is exact to well under 0.1 % relative for formulas below 1,500 u) and their abundance-weighted mass shifts,
 * as a centroiding instrument that cannot resolve the isotopologues reports them.
 */
export function isotopeRatios(x: Formula): IsotopeRatios {
  let m1 = 0;
  let m1Mass = 0;
  let sumSq = 0;
  let m2Direct = 0;
  let m2DirectMass = 0;
  const plus1: { shift: number; ratio: number }[] = [];
  for (let i = 0; i < x.counts.length; i++) {
    const n = x.counts[i]!;
    if (n <= 0) continue;
    for (const iso of RATIOS[i]!) {
      if (iso.nominal === 1) {
        m1 += n * iso.ratio;
        m1Mass += n * iso.ratio * iso.shift;
        sumSq += n * iso.ratio * iso.ratio;
        plus1.push({ shift: iso.shift, ratio: n * iso.ratio });
      } else if (iso.nominal === 2) {
        m2Direct += n * iso.ratio;
        m2DirectMass += n * iso.ratio * iso.shift;
      }
    }
  }
  // Two +1 substitutions: (Σ rᵢ)² / 2 − Σ nᵢ pᵢ² / 2 (no two heavy atoms on one site); mass 2 × mean shift.
  const m2Double = (m1 * m1 - sumSq) / 2;
  const m1Shift = m1 > 0 ? m1Mass / m1 : 1.00335483507;
  const m2 = m2Double + m2Direct;
  const m2Shift = m2 > 0 ? (m2Double * 2 * m1Shift + m2DirectMass) / m2 : 2 * m1Shift;
  return { m1, m1Shift, m2, m2Shift };
}
