import { IsotopicDistribution } from 'isotopic-distribution';
import { describe, expect, it } from 'vitest';
import { formatFormula, formulaMz, parseFormula } from '../../../engine/chem/formula.js';
import { f, isotopeRatios } from '../../../bench/sim/chem.js';
import { fragmentIon, glycosideFragments, precursorIon, ringIons } from '../../../bench/sim/fragments.js';
import { Rng } from '../../../bench/sim/prng.js';
import { glycoside } from '../../../bench/sim/scenario.js';
import { structureFormula } from '../../../bench/sim/structure.js';

const mz = (text: string) => formulaMz(parseFormula(text));

describe('simulator masses', () => {
  it('writes flavylium glycosides as [M]+ with the electron correction', () => {
    const s = glycoside('cyanidin', '3-O:Hex');
    const ion = precursorIon(structureFormula(s), '[M]+');
    // REFERENCE.md §1 [calc]: cyanidin 3-glucoside C21H21O11+ is m/z 449.10784, not 449.1084.
    expect(formatFormula(ion)).toBe('C21H21O11+');
    expect(formulaMz(ion)).toBeCloseTo(449.10784, 4);
  });

  it('applies the adduct shifts of REFERENCE.md §1', () => {
    const m = structureFormula(glycoside('quercetin', '3-O:Hex'));
    const neutral = formulaMz(m);
    // Adduct shifts [calc], REFERENCE.md §1.
    expect(formulaMz(precursorIon(m, '[M+H]+')) - neutral).toBeCloseTo(1.0072765, 6);
    expect(formulaMz(precursorIon(m, '[M+Na]+')) - neutral).toBeCloseTo(22.9892207, 6);
    expect(formulaMz(precursorIon(m, '[M+K]+')) - neutral).toBeCloseTo(38.9631579, 6);
    expect(formulaMz(precursorIon(m, '[M+NH4]+')) - neutral).toBeCloseTo(18.0338256, 6);
    expect(formulaMz(precursorIon(m, '[M+Cl]-')) - neutral).toBeCloseTo(34.9694013, 6);
    expect(formulaMz(precursorIon(m, '[M+HCOO]-')) - neutral).toBeCloseTo(44.9982029, 6);
    expect(formulaMz(precursorIon(m, '[M-H]-')) - neutral).toBeCloseTo(-1.0072765, 6);
    // Quercetin 3-glucoside [M−H]− 463.08820 (REFERENCE.md §4 [calc]).
    expect(formulaMz(precursorIon(m, '[M-H]-'))).toBeCloseTo(463.0882, 4);
    expect(formulaMz(precursorIon(m, '[M+2H]2+'))).toBeCloseTo((neutral + 2 * 1.0072765) / 2, 6);
  });

  it('puts the worked examples of REFERENCE.md §4 at their published m/z', () => {
    // Rutin [M+H]+ 611.16066 → 465 → 303 (Kwon et al. 2019, Table 1; exact masses [calc]).
    const rutin = glycoside('quercetin', '3-O:Hex(dHex)');
    expect(formulaMz(precursorIon(structureFormula(rutin), '[M+H]+'))).toBeCloseTo(611.16066, 4);
    // Vitexin [M−H]− 431.09837 → 311.05611 (−120) and 341.06668 (−90) [mem].
    const vitexin = glycoside('apigenin', '8-C:Hex');
    expect(formulaMz(precursorIon(structureFormula(vitexin), '[M-H]-'))).toBeCloseTo(431.09837, 4);
    const peaks = glycosideFragments(vitexin, '[M-H]-', new Rng(3), { energy: 0.8 });
    const mzs = peaks.map((p) => formulaMz(p.formula!));
    expect(mzs.some((x) => Math.abs(x - 311.05611) < 1e-4)).toBe(true);
    expect(mzs.some((x) => Math.abs(x - 341.06668) < 1e-4)).toBe(true);
    // Kaempferol 3-(6″-malonyl)glucoside 535 → 287: loss of 248.05322 (Kwon 2019).
    const km = glycoside('kaempferol', '3-O:Hex[malonyl]');
    const p = formulaMz(precursorIon(structureFormula(km), '[M+H]+'));
    expect(p - formulaMz(fragmentIon(f('C15H10O6'), '[M+H]+'))).toBeCloseTo(248.05322, 4);
  });

  it('computes ring-cleavage ions of 5,7-dihydroxy flavonoids at the textbook m/z', () => {
    const apigenin = { aOH: 2, aOMe: 0, bOH: 1, bOMe: 0 };
    const pos = ringIons('flavone', apigenin, false).map((x) => formulaMz(x.formula));
    const neg = ringIons('flavone', apigenin, true).map((x) => formulaMz(x.formula));
    // 1,3A+ 153.0182, 1,3B+ 119.0491, 1,3A− 151.0037, 1,3B− 117.0346 [from memory; exact masses calc].
    expect(pos[0]).toBeCloseTo(mz('C7H5O4+'), 6);
    expect(pos[0]).toBeCloseTo(153.0182, 3);
    expect(pos[1]).toBeCloseTo(119.0491, 3);
    expect(neg[0]).toBeCloseTo(151.0037, 3);
    expect(neg[1]).toBeCloseTo(117.0346, 3);
  });

  it('gives isotope ratios that agree with the isotopic-distribution package', () => {
    // Reference library from the npm registry (isotopic-distribution 3.6.0), same NIST abundances.
    for (const formula of ['C21H21O11', 'C27H30O16', 'C15H10O7', 'C40H60N2O20', 'C6H10O5Na']) {
      const table = new IsotopicDistribution(formula, { fwhm: 0.05 }).getTable({ maxValue: 1 }) as {
        x: number;
        y: number;
      }[];
      const r = isotopeRatios(f(formula));
      expect(r.m1).toBeCloseTo(table[1]!.y, 3);
      expect(r.m2).toBeCloseTo(table[2]!.y, 3);
      expect(r.m1Shift).toBeCloseTo(table[1]!.x - table[0]!.x, 3);
    }
  });

  it('gives negative flavonol 3-O-glycosides a radical aglycone and flavanone 7-O-glycosides none', () => {
    // Hvattum & Ekeberg 2003: Y0− and [Y0−H]−• for flavonol 3-O-glycosides; none for flavanone 7-O-glycosides.
    const q = glycosideFragments(glycoside('quercetin', '3-O:Hex'), '[M-H]-', new Rng(5), { energy: 0.8 });
    const radical = q.find((p) => p.kind === 'radical');
    expect(radical && formatFormula(radical.formula!)).toBe('C15H8O7-');
    expect(formulaMz(radical!.formula!)).toBeCloseTo(300.02755, 4);
    const n = glycosideFragments(glycoside('naringenin', '7-O:Hex(dHex)'), '[M-H]-', new Rng(5), {
      energy: 0.8,
    });
    expect(n.some((p) => p.kind === 'radical')).toBe(false);
  });

  it('keeps the metal on the fragments of sodiated precursors', () => {
    const peaks = glycosideFragments(glycoside('kaempferol', '3-O:Hex(dHex)'), '[M+Na]+', new Rng(9), {
      energy: 1,
    });
    const y = peaks.filter((p) => p.kind === 'Y');
    expect(y.length).toBeGreaterThan(0);
    for (const p of y) expect(formatFormula(p.formula!)).toMatch(/Na/);
  });
});
