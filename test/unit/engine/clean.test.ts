// Spectrum clean-up: merging, ¹³C isotope folding, noise floor, peak cap, normalisation, bad peaks.
import { describe, expect, it } from 'vitest';
import { formulaMz, parseFormula } from '../../../engine/chem/formula.js';
import type { RuleSet } from '../../../engine/rules/schema.js';
import { C13_SPACING, type CleanOptions, cleanSpectrum } from '../../../engine/spectrum/clean.js';
import type { Spectrum } from '../../../engine/spectrum/spectrum.js';
import { loadDefaultRuleSet } from '../../../formats/ruleset-file.js';

const rules = (await loadDefaultRuleSet()).value as RuleSet;
/** The clean-up settings the default rule set gives the engine. */
const DEFAULTS: CleanOptions = {
  ...rules.cleanup,
  ppm: rules.tolerances.fragmentPpm,
  floorDa: rules.tolerances.fragmentFloorDa,
};

const mz = (formula: string) => formulaMz(parseFormula(formula));
const spectrum = (precursorMz: number, peaks: [number, number][], charge = 1): Spectrum => ({
  id: 'clean-test',
  precursor: { mz: precursorMz, charge },
  peaks,
});
const find = (s: { mz: Float64Array }, m: number, tolDa = 0.0005) =>
  s.mz.findIndex((x) => Math.abs(x - m) <= tolDa);

describe('cleanSpectrum: settings and constants', () => {
  it('uses the ¹³C − ¹²C spacing 1.00335484 Da', () => {
    // REFERENCE.md §1 [calc] from NIST isotopic masses (13.00335483507 − 12)
    expect(C13_SPACING).toBeCloseTo(1.00335484, 8);
  });
});

describe('cleanSpectrum: ¹³C isotope folding', () => {
  const y0 = mz('C15H11O6+'); // cyanidin⁺ / kaempferol [M+H]⁺ 287.05501, REFERENCE.md §3 [calc]

  it('folds an M+1 peak at +1.00335 with a plausible ratio into its monoisotopic peak', () => {
    // C15: M+1 ≈ 15 × 1.07 % ≈ 16 % of M (NIST ¹³C abundance 0.0107, REFERENCE.md §1)
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [y0, 100],
        [y0 + C13_SPACING, 16.5],
        [449.10784, 20],
      ]),
      DEFAULTS,
    );
    expect(s.mz.length).toBe(2);
    const k = find(s, y0);
    expect(k).toBeGreaterThanOrEqual(0);
    expect(s.isotopes[k]).toBe(1);
    expect(s.counts.isotopes).toBe(1);
    // Its intensity joins the monoisotopic peak.
    expect(s.intensity[k]).toBeCloseTo(116.5 / 136.5, 12);
    expect(find(s, y0 + C13_SPACING)).toBe(-1);
  });

  it('folds M+1 and M+2 in one series', () => {
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [y0, 100],
        [y0 + C13_SPACING, 16.5],
        [y0 + 2 * C13_SPACING, 2.5],
        [449.10784, 20],
      ]),
      DEFAULTS,
    );
    const k = find(s, y0);
    expect(s.isotopes[k]).toBe(2);
    expect(s.mz.length).toBe(2);
  });

  it('keeps a peak at +1.00335 whose intensity no carbon count could give (another ion)', () => {
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [y0, 100],
        [y0 + C13_SPACING, 90],
        [449.10784, 20],
      ]),
      DEFAULTS,
    );
    expect(s.mz.length).toBe(3);
    expect(s.isotopes[find(s, y0)]).toBe(0);
  });

  it('keeps a peak 0.01 Da off the isotope spacing', () => {
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [y0, 100],
        [y0 + C13_SPACING + 0.01, 10],
        [449.10784, 20],
      ]),
      DEFAULTS,
    );
    expect(s.mz.length).toBe(3);
  });

  it('folds doubly charged isotope peaks at +0.50168', () => {
    const p = 500.2;
    const s = cleanSpectrum(
      spectrum(
        p,
        [
          [p, 100],
          [p + C13_SPACING / 2, 30],
          [300, 50],
        ],
        2,
      ),
      DEFAULTS,
    );
    expect(s.mz.length).toBe(2);
    expect(s.isotopes[find(s, p)]).toBe(1);
  });

  it('does not fold when deisotoping is off', () => {
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [y0, 100],
        [y0 + C13_SPACING, 16.5],
      ]),
      { ...DEFAULTS, deisotope: false },
    );
    expect(s.mz.length).toBe(2);
    expect(s.counts.isotopes).toBe(0);
  });
});

describe('cleanSpectrum: the radical aglycone trap (REFERENCE.md §6)', () => {
  // Quercetin 3-glucoside [M−H]⁻ 463.08820 → Y0⁻ 301.03538 and [Y0−H]⁻• 300.02755 (Hvattum & Ekeberg 2003,
  // J Mass Spectrom 38:43; m/z values REFERENCE.md §3–4 [calc]). The ¹³C peak of the radical (301.03091)
  // sits 15 ppm from Y0⁻ (REFERENCE.md §6 [calc]).
  const precursor = mz('C21H19O12-');
  const y0 = mz('C15H9O7-');
  const radical = mz('C15H8O7-');
  const radical13C = radical + C13_SPACING;

  it('the check values follow from the formulas', () => {
    expect(precursor).toBeCloseTo(463.0882, 4); // REFERENCE.md §4 [calc]
    expect(y0).toBeCloseTo(301.03538, 5); // REFERENCE.md §3 [calc]
    expect(radical).toBeCloseTo(300.02755, 5); // REFERENCE.md §3 [calc]
    expect(radical13C).toBeCloseTo(301.03091, 5); // REFERENCE.md §6 [calc]
    expect(((y0 - radical13C) / y0) * 1e6).toBeCloseTo(14.8, 1); // "15 ppm", REFERENCE.md §6 [calc]
  });

  it.each([
    { what: 'at the default tolerances', options: DEFAULTS },
    { what: 'at 5 ppm', options: { ...DEFAULTS, ppm: 5 } },
  ])('Y0⁻ survives as its own peak next to the radical and its ¹³C peak ($what)', ({ options }) => {
    const s = cleanSpectrum(
      spectrum(
        precursor,
        [
          [precursor, 30],
          [y0, 60],
          [radical, 100],
          [radical13C, 16],
        ],
        -1,
      ),
      options,
    );
    const kY0 = find(s, y0, 0.001);
    const kRad = find(s, radical, 0.001);
    expect(kY0).toBeGreaterThanOrEqual(0);
    expect(s.mz[kY0]).toBeCloseTo(y0, 4); // not averaged with the ¹³C peak
    expect(s.isotopes[kRad]).toBe(1); // the radical's ¹³C peak folds into the radical
    expect(s.intensity[kY0]).toBeCloseTo(60 / 206, 12); // Y0 keeps exactly its own intensity
    expect(s.mz.length).toBe(3);
  });

  it('a weak Y0⁻ (at a ratio a ¹³C peak could have) is not taken for the radical’s isotope peak', () => {
    const s = cleanSpectrum(
      spectrum(
        precursor,
        [
          [precursor, 30],
          [y0, 15],
          [radical, 100],
        ],
        -1,
      ),
      DEFAULTS,
    );
    const kY0 = find(s, y0, 0.001);
    expect(kY0).toBeGreaterThanOrEqual(0);
    expect(s.isotopes[find(s, radical)]).toBe(0);
    expect(s.mz.length).toBe(3);
  });
});

describe('cleanSpectrum: merging', () => {
  it('merges peaks within the fragment tolerance into one at the intensity-weighted m/z', () => {
    const a = 287.055;
    const b = 287.0553; // 1 ppm apart
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [a, 60],
        [b, 40],
        [449.10784, 10],
      ]),
      DEFAULTS,
    );
    expect(s.mz.length).toBe(2);
    expect(s.counts.merged).toBe(1);
    expect(s.mz[0]).toBeCloseTo((a * 60 + b * 40) / 100, 10);
    expect(s.intensity[0]).toBeCloseTo(100 / 110, 12);
  });

  it('keeps peaks 20 ppm apart separate at 10 ppm', () => {
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [287.055, 60],
        [287.055 * (1 + 20e-6), 40],
        [449.10784, 10],
      ]),
      DEFAULTS,
    );
    expect(s.mz.length).toBe(3);
    expect(s.counts.merged).toBe(0);
  });

  it('merges at low m/z within the absolute floor (2 mDa), where ppm alone would split them', () => {
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [100, 50],
        [100.0015, 50],
        [449.10784, 10],
      ]),
      DEFAULTS,
    );
    expect(s.counts.merged).toBe(1);
    expect(s.mz.length).toBe(2);
  });

  it('sorts unsorted input ascending by m/z', () => {
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [449.10784, 10],
        [287.05501, 100],
        [137.02, 5],
        [303.05, 7],
      ]),
      DEFAULTS,
    );
    expect(Array.from(s.mz)).toEqual([...s.mz].sort((x, y) => x - y));
  });
});

describe('cleanSpectrum: noise floor, cap, precursor, normalisation', () => {
  it('drops peaks below the noise floor (0.5 % of the base peak) and keeps those above', () => {
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [200, 1000],
        [210, 4],
        [220, 6],
        [449.10784, 100],
      ]),
      DEFAULTS,
    );
    expect(find(s, 210)).toBe(-1);
    expect(find(s, 220)).toBeGreaterThanOrEqual(0);
    expect(s.counts.noise).toBe(1);
  });

  it('caps the peak count, keeps the most intense peaks and always the precursor', () => {
    const precursorMz = 611.16066;
    const peaks: [number, number][] = [];
    // 80 fragments 5.3 Da apart (no merging, no isotope spacing), descending intensity; the precursor weakest.
    for (let k = 0; k < 80; k++) peaks.push([150 + k * 5.3, 1000 - k * 10]);
    peaks.push([precursorMz, 210]);
    const s = cleanSpectrum(spectrum(precursorMz, peaks), DEFAULTS);
    expect(s.mz.length).toBe(DEFAULTS.maxPeaks);
    expect(s.counts.capped).toBe(81 - DEFAULTS.maxPeaks);
    expect(s.precursorIndex).toBeGreaterThanOrEqual(0);
    expect(s.mz[s.precursorIndex]).toBeCloseTo(precursorMz, 6);
    // The other kept peaks are the 59 most intense fragments.
    for (let k = 0; k < DEFAULTS.maxPeaks - 1; k++) expect(find(s, 150 + k * 5.3)).toBeGreaterThanOrEqual(0);
    expect(find(s, 150 + 59 * 5.3)).toBe(-1);
  });

  it('finds the precursor within tolerance, and says -1 when it is absent', () => {
    const p = 465.10275;
    expect(
      cleanSpectrum(
        spectrum(p, [
          [p * (1 + 3e-6), 10],
          [303.04993, 100],
        ]),
        DEFAULTS,
      ).precursorIndex,
    ).toBe(1);
    expect(cleanSpectrum(spectrum(p, [[303.04993, 100]]), DEFAULTS).precursorIndex).toBe(-1);
  });

  it('normalises intensities to sum to 1 and reports the raw total', () => {
    const s = cleanSpectrum(
      spectrum(611.16066, [
        [611.16066, 13],
        [465.10275, 40],
        [303.04993, 100],
        [129.05, 2.5],
      ]),
      DEFAULTS,
    );
    const sum = s.intensity.reduce((a, b) => a + b, 0);
    expect(sum).toBeCloseTo(1, 12);
    expect(s.rawTotal).toBeCloseTo(155.5, 9);
    expect(s.intensity[find(s, 303.04993)]).toBeCloseTo(100 / 155.5, 12);
  });

  it('drops singly charged peaks above the precursor but keeps fragments above a doubly charged one', () => {
    const one = cleanSpectrum(
      spectrum(449.1, [
        [449.1, 10],
        [287.05, 100],
        [520.3, 50],
      ]),
      DEFAULTS,
    );
    expect(find(one, 520.3)).toBe(-1);
    const two = cleanSpectrum(
      spectrum(
        449.1,
        [
          [449.1, 10],
          [287.05, 100],
          [620.3, 50],
        ],
        2,
      ),
      DEFAULTS,
    );
    expect(find(two, 620.3)).toBeGreaterThanOrEqual(0);
  });
});

describe('cleanSpectrum: bad peaks are dropped, never a crash', () => {
  it('drops NaN, infinite, negative and zero values and counts them', () => {
    const s = cleanSpectrum(
      spectrum(449.10784, [
        [Number.NaN, 10],
        [287.05501, Number.NaN],
        [Number.POSITIVE_INFINITY, 5],
        [300, Number.POSITIVE_INFINITY],
        [-5, 10],
        [310, -1],
        [320, 0],
        [287.05501, 100],
        [449.10784, 20],
      ]),
      DEFAULTS,
    );
    expect(s.counts.input).toBe(9);
    expect(s.counts.invalid).toBe(7);
    expect(s.mz.length).toBe(2);
    expect(s.intensity.every(Number.isFinite)).toBe(true);
    expect(s.intensity.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
  });

  it('returns an empty spectrum for no peaks or only bad peaks', () => {
    for (const peaks of [[], [[Number.NaN, Number.NaN]]] as [number, number][][]) {
      const s = cleanSpectrum(spectrum(449.10784, peaks), DEFAULTS);
      expect(s.mz.length).toBe(0);
      expect(s.precursorIndex).toBe(-1);
    }
  });
});
