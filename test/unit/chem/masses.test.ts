import { describe, expect, it } from 'vitest';
import {
  ELECTRON_MASS,
  formulaMz,
  ionMz,
  ionType,
  monoisotopicMass,
  neutralMass,
  parseFormula,
  PROTON_MASS,
} from '../../../engine/chem/index.js';

const mass = (f: string): number => monoisotopicMass(parseFormula(f));
const mz = (f: string): number => formulaMz(parseFormula(f));
const ion = (neutral: string, name: string): number => ionMz(parseFormula(neutral), ionType(name)!);

describe('monoisotopic masses of neutral species and residues', () => {
  it.each([
    // REFERENCE.md §2: H2O 18.01056 (Fabre et al. 2001, J Am Soc Mass Spectrom 12:707) [pub]
    ['H2O', 18.01056],
    // REFERENCE.md §2: hexose residue (Kazuno et al. 2005, Anal Biochem 347:182) [pub]
    ['C6H10O5', 162.05282],
    // REFERENCE.md §2: pentose residue (Molecules 2016, 21:1494) [pub]
    ['C5H8O4', 132.04226],
    // REFERENCE.md §2: deoxyhexose residue (Kwon et al. 2019, J Food Qual 2019:1528917) [pub]
    ['C6H10O4', 146.05791],
    // REFERENCE.md §2: hexuronic acid residue (PMC4885406) [pub]
    ['C6H8O6', 176.03209],
    // REFERENCE.md §2: rutinosyl Hex+dHex (Shi et al. 2007, Anal Chim Acta 598:110) [pub]
    ['C12H20O9', 308.11073],
    // REFERENCE.md §2: acyl groups (Wu & Prior 2005, J Agric Food Chem 53:3101) [pub]
    ['C2H2O', 42.01056],
    ['C3H2O3', 86.00039],
    ['C9H6O2', 146.03678],
    ['C9H6O3', 162.03169],
    ['C10H8O3', 176.04734],
    ['C11H10O4', 206.05791],
    ['C7H4O2', 120.02113],
    ['C2O3', 71.98474],
    // REFERENCE.md §2: small losses CO, CO2, C3O2 (Fabre et al. 2001) [pub]
    ['CO', 27.99491],
    ['CO2', 43.98983],
    ['C3O2', 67.98983],
    // REFERENCE.md §2: C-hexoside cross-ring losses (PMC5632855; Kazuno 2005) [pub]
    ['C3H6O3', 90.03169],
    ['C4H8O4', 120.04226],
    ['C5H10O5', 150.05282],
    ['C2H4O2', 60.02113],
  ])('%s = %f', (f, expected) => {
    expect(mass(f)).toBeCloseTo(expected, 5);
  });

  it('uses the NIST masses of REFERENCE.md §1', () => {
    // REFERENCE.md §1: NIST Atomic Weights and Isotopic Compositions [pub]; CODATA 2018 electron [pub]
    expect(neutralMass(parseFormula('H'))).toBe(1.00782503223);
    expect(neutralMass(parseFormula('C'))).toBe(12);
    expect(neutralMass(parseFormula('O'))).toBe(15.99491461957);
    expect(ELECTRON_MASS).toBe(0.000548579909065);
    expect(PROTON_MASS).toBeCloseTo(1.0072765, 7); // REFERENCE.md §1 adduct shift +H+ [calc]
  });
});

describe('electron correction of ions', () => {
  it('cyanidin 3-glucoside C21H21O11+ is 449.10784, not the uncorrected 449.1084', () => {
    // REFERENCE.md §1 and §3 [calc] from NIST masses
    expect(mz('C21H21O11+')).toBeCloseTo(449.10784, 5);
    expect(Math.abs(mz('C21H21O11+') - 449.1084)).toBeGreaterThan(0.0004);
    expect(neutralMass(parseFormula('C21H21O11')) - mz('C21H21O11+')).toBeCloseTo(ELECTRON_MASS, 12);
  });

  it('an anion is heavier than its atoms by one electron', () => {
    expect(mz('C15H9O6-') - neutralMass(parseFormula('C15H9O6'))).toBeCloseTo(ELECTRON_MASS, 12);
  });

  it('a doubly charged ion has m/z = (atoms − 2e) / 2', () => {
    const atoms = neutralMass(parseFormula('C27H32O16'));
    expect(mz('C27H32O16+2')).toBeCloseTo((atoms - 2 * ELECTRON_MASS) / 2, 10);
  });
});

describe('anthocyanidin flavylium ions [M]+ (REFERENCE.md §3 [calc] from NIST masses)', () => {
  it.each([
    ['pelargonidin', 'C15H11O5', 271.0601],
    ['cyanidin', 'C15H11O6', 287.05501],
    ['delphinidin', 'C15H11O7', 303.04993],
    ['peonidin', 'C16H13O6', 301.07066],
    ['petunidin', 'C16H13O7', 317.06558],
    ['malvidin', 'C17H15O7', 331.08123],
  ])('%s %s+ = %f', (_name, atoms, expected) => {
    expect(ion(atoms, '[M]+')).toBeCloseTo(expected, 5);
    expect(mz(`${atoms}+`)).toBeCloseTo(expected, 5);
  });
});

describe('flavonoid aglycone ions (REFERENCE.md §3 table [calc] from NIST masses)', () => {
  it.each([
    ['kaempferol', 'C15H10O6', 287.05501, 285.04046, 284.03264],
    ['quercetin', 'C15H10O7', 303.04993, 301.03538, 300.02755],
    ['myricetin', 'C15H10O8', 319.04484, 317.03029, 316.02247],
    ['isorhamnetin', 'C16H12O7', 317.06558, 315.05103, 314.0432],
    ['apigenin', 'C15H10O5', 271.0601, 269.04555, 268.03772],
  ])('%s %s', (_name, f, mh, mMinusH, radical) => {
    expect(ion(f, '[M+H]+')).toBeCloseTo(mh, 5);
    expect(ion(f, '[M-H]-')).toBeCloseTo(mMinusH, 5);
    // The radical anion [M−2H]−• has the atoms of M − 2H and one negative charge.
    const atoms = parseFormula(f);
    const counts = [...atoms.counts];
    counts[1]! -= 2;
    expect(formulaMz({ counts, charge: -1 })).toBeCloseTo(radical, 5);
  });
});

describe('glycoside ions and sugar oxonium ions (REFERENCE.md §3–4 [calc])', () => {
  it.each([
    ['pelargonidin 3-glucoside+ = apigenin 8-C-glucoside [M+H]+', 'C21H21O10+', 433.11292],
    ['cyanidin 3,5-dihexoside+ = quercetin 3-rutinoside [M+H]+', 'C27H31O16+', 611.16066],
    ['quercetin 3-glucoside [M-H]-', 'C21H19O12-', 463.0882],
    ['vitexin [M-H]-', 'C21H19O10-', 431.09837],
    ['Hex oxonium', 'C6H11O5+', 163.0601],
    ['dHex oxonium', 'C6H11O4+', 147.06519],
    ['Pen oxonium', 'C5H9O4+', 133.04954],
    ['coumaroyl acylium', 'C9H7O2+', 147.04406],
  ])('%s', (_label, f, expected) => {
    expect(mz(f)).toBeCloseTo(expected, 5);
  });

  it('the 13C peak of quercetin radical aglycone sits 15 ppm from Y0- (REFERENCE.md §6 [calc])', () => {
    const c13 = mz('C15H8O7-') + 1.00335483507;
    expect(c13).toBeCloseTo(301.03091, 5);
    expect(((mz('C15H9O7-') - c13) / c13) * 1e6).toBeCloseTo(14.8, 1);
  });
});

describe('adduct shifts (REFERENCE.md §1 [calc])', () => {
  const water = parseFormula('H2O');
  const m = neutralMass(water);
  it.each([
    ['[M+H]+', 1.0072765],
    ['[M+Na]+', 22.9892207],
    ['[M+K]+', 38.9631579],
    ['[M+NH4]+', 18.0338256],
    ['[M+Cl]-', 34.9694013],
    ['[M+HCOO]-', 44.9982029],
    ['[M-H]-', -1.0072765],
  ])('%s shifts by %f', (name, shift) => {
    expect(ionMz(water, ionType(name)!) - m).toBeCloseTo(shift, 7);
  });
});
