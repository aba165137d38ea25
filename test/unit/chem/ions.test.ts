import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  formatFormula,
  ION_TYPES,
  ionFormula,
  ionMz,
  ionType,
  isNonNegative,
  neutralMass,
  neutralMassFromMz,
  parseFormula,
  parseIonType,
  resolveIonType,
} from '../../../engine/chem/index.js';

describe('ion types', () => {
  it('knows the ion types the issue asks for, with signed charges and polarity', () => {
    const expected: [string, number][] = [
      ['[M]+', 1],
      ['[M+H]+', 1],
      ['[M+Na]+', 1],
      ['[M+K]+', 1],
      ['[M+NH4]+', 1],
      ['[M-H]-', -1],
      ['[M+HCOO]-', -1],
      ['[M+Cl]-', -1],
      ['[M-2H]2-', -2],
      ['[M+2H]2+', 2],
      ['[M]-', -1],
    ];
    for (const [name, z] of expected) {
      const t = ionType(name);
      expect(t, name).toBeDefined();
      expect(t!.charge).toBe(z);
      expect(t!.polarity).toBe(z > 0 ? 'positive' : 'negative');
      expect(t!.multiplier).toBe(1);
    }
    expect(new Set(ION_TYPES.map((t) => t.name)).size).toBe(ION_TYPES.length);
  });

  it('writes the ion formula: C21H20O11 with [M+H]+ is C21H21O11+; a flavylium [M]+ keeps its atoms', () => {
    expect(formatFormula(ionFormula(parseFormula('C21H20O11'), ionType('[M+H]+')!))).toBe('C21H21O11+');
    expect(formatFormula(ionFormula(parseFormula('C15H11O6'), ionType('[M]+')!))).toBe('C15H11O6+');
    expect(formatFormula(ionFormula(parseFormula('C21H20O12'), ionType('[M-H]-')!))).toBe('C21H19O12-');
    expect(formatFormula(ionFormula(parseFormula('C6H12O6'), ionType('[M+HCOO]-')!))).toBe('C7H13O8-');
    expect(formatFormula(ionFormula(parseFormula('C6H12O6'), ionType('[M+NH4]+')!))).toBe('C6H16NO6+');
    expect(formatFormula(ionFormula(parseFormula('C27H30O16'), ionType('[M-2H]2-')!))).toBe('C27H28O16-2');
  });

  it('gives m/z with the electron correction (REFERENCE.md §1 and §3 [calc] from NIST masses)', () => {
    // Kaempferol 3-glucoside [M+H]+ has the formula and m/z of cyanidin 3-glucoside+ (REFERENCE.md §3).
    expect(ionMz(parseFormula('C21H20O11'), ionType('[M+H]+')!)).toBeCloseTo(449.10784, 5);
    expect(ionMz(parseFormula('C21H21O11'), ionType('[M]+')!)).toBeCloseTo(449.10784, 5);
    // Rutin C27H30O16 [M+2H]2+: (610.15338 + 2 × 1.0072765) / 2 [calc]
    expect(ionMz(parseFormula('C27H30O16'), ionType('[M+2H]2+')!)).toBeCloseTo(306.08397, 5);
  });

  it('neutralMassFromMz inverts ionMz for every ion type (property, seeded)', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 60 }),
        fc.integer({ min: 4, max: 100 }),
        fc.integer({ min: 0, max: 30 }),
        fc.constantFrom(...ION_TYPES),
        (c, h, o, t) => {
          const f = { counts: [c, h, 0, o, 0, 0, 0, 0, 0], charge: 0 };
          const m = ionMz(f, t);
          expect(neutralMassFromMz(m, t)).toBeCloseTo(neutralMass(f), 9);
        },
      ),
      { seed: 11, numRuns: 300 },
    );
  });

  it('parses written ion types, including ones not in the table', () => {
    const t = parseIonType('[2M+Na]+');
    expect(t.multiplier).toBe(2);
    expect(t.charge).toBe(1);
    expect(formatFormula(ionFormula(parseFormula('C6H12O6'), t))).toBe('C12H24NaO12+');
    const w = parseIonType('[M-H2O+H]+');
    expect(formatFormula(ionFormula(parseFormula('C21H20O11'), w))).toBe('C21H19O10+');
    expect(parseIonType(' [M − H]− ').name).toBe('[M-H]-');
    expect(parseIonType('[M+3H]3+').charge).toBe(3);
    expect(resolveIonType('[M+H]+')).toBe(ionType('[M+H]+'));
    expect(parseIonType('[M+CH3COO]-').deltaMass).toBeCloseTo(neutralMass(parseFormula('C2H3O2')), 12);
  });

  it.each([
    ['M+H', 'ion-syntax'],
    ['[M+H]', 'ion-syntax'],
    ['[M+H]0+', 'ion-charge'],
    ['[M+Xx]+', 'ion-formula'],
    ['[0M+H]+', 'ion-syntax'],
  ])('rejects %s with code %s', (text, code) => {
    expect(() => parseIonType(text)).toThrow(expect.objectContaining({ code, name: 'IonTypeError' }));
  });

  it('flags an ion that removes atoms the molecule lacks', () => {
    expect(isNonNegative(ionFormula(parseFormula('CO2'), ionType('[M-H]-')!))).toBe(false);
  });
});
