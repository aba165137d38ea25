import fc from 'fast-check';
import mfParser from 'mf-parser';
import { describe, expect, it } from 'vitest';
import {
  type Formula,
  formatFormula,
  formulaMz,
  monoisotopicMass,
  parseFormula,
  rdbe,
} from '../../../engine/chem/index.js';
import { formulaArb } from './arbitraries.js';

/** The formula in mf-parser's syntax: charge in parentheses, e.g. C15H11O6(+1). */
function mfParserText(f: Formula): string {
  const atoms = formatFormula({ counts: f.counts, charge: 0 });
  return f.charge === 0 ? atoms : `${atoms}(${f.charge > 0 ? '+' : ''}${f.charge})`;
}

describe('formula parsing and formatting', () => {
  it('parse ∘ format is the identity (property, seeded)', () => {
    fc.assert(
      fc.property(formulaArb(), (f) => {
        expect(parseFormula(formatFormula(f))).toEqual(f);
      }),
      { seed: 7, numRuns: 1000 },
    );
  });

  it('writes Hill order: C, H, then alphabetical; without carbon all alphabetical', () => {
    // Hill order (Hill 1900, J Am Chem Soc 22:478, from memory), used by CAS and most references (common practice)
    expect(formatFormula(parseFormula('O11H21C21+'))).toBe('C21H21O11+');
    expect(formatFormula(parseFormula('NaClH2O'))).toBe('ClH2NaO');
    expect(formatFormula(parseFormula('C6H12O6Na+'))).toBe('C6H12NaO6+');
    expect(formatFormula(parseFormula('CH3COOH'))).toBe('C2H4O2');
  });

  it('reads charge suffixes', () => {
    expect(parseFormula('C15H11O6+').charge).toBe(1);
    expect(parseFormula('C27H28O16 2-').charge).toBe(-2);
    expect(parseFormula('CO2+2').charge).toBe(2);
    expect(parseFormula('C6H14O6++').charge).toBe(2);
  });

  it.each([
    ['', 'formula-empty'],
    ['Xy2', 'formula-unknown-element'],
    ['C6H12O6?', 'formula-syntax'],
    ['123', 'formula-syntax'],
  ])('rejects %j with code %s', (text, code) => {
    expect(() => parseFormula(text)).toThrow(expect.objectContaining({ code }));
  });

  it('computes RDBE: benzene 4, glucose 1, flavylium cation 10.5 (common practice)', () => {
    expect(rdbe(parseFormula('C6H6'))).toBe(4);
    expect(rdbe(parseFormula('C6H12O6'))).toBe(1);
    expect(rdbe(parseFormula('C15H11O6+'))).toBe(10.5);
  });
});

describe('masses against mf-parser (npm, general-purpose formula library) as an oracle', () => {
  it('neutral monoisotopic masses agree over many random formulas (seeded)', () => {
    fc.assert(
      fc.property(formulaArb(0), (f) => {
        const info = new mfParser.MF(mfParserText(f)).getInfo() as { monoisotopicMass: number };
        expect(monoisotopicMass(f)).toBeCloseTo(info.monoisotopicMass, 8);
      }),
      { seed: 3, numRuns: 500 },
    );
  });

  it('electron-corrected m/z of charged formulas agree (seeded)', () => {
    fc.assert(
      fc.property(formulaArb(3), (f) => {
        fc.pre(f.charge !== 0);
        const info = new mfParser.MF(mfParserText(f)).getInfo() as { observedMonoisotopicMass: number };
        expect(formulaMz(f)).toBeCloseTo(info.observedMonoisotopicMass, 8);
      }),
      { seed: 5, numRuns: 500 },
    );
  });
});
