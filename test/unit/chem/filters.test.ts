import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  createFormulaFilter,
  electronState,
  formulaProblems,
  isPlausibleFormula,
  NO_FILTERS,
  parseFormula,
} from '../../../engine/chem/index.js';
import { formulaArb } from './arbitraries.js';

const problems = (f: string, options = {}) => formulaProblems(parseFormula(f), options);
const only = { senior: false, ratios: false, elementCounts: false } as const;

describe('RDBE and electron state', () => {
  it.each([
    // Even-electron species (common practice: nitrogen/electron rule)
    ['C21H20O11', 'even'], // kaempferol 3-glucoside, neutral
    ['C21H21O11+', 'even'], // its [M+H]+, also cyanidin 3-glucoside flavylium [M]+ (REFERENCE.md §3)
    ['C15H11O6+', 'even'], // cyanidin flavylium
    ['C21H19O12-', 'even'], // quercetin 3-glucoside [M-H]- (REFERENCE.md §4)
    ['C6H12NaO6+', 'even'], // [M+Na]+
    ['C27H32O16+2', 'even'], // [M+2H]2+
    // Radicals: [Y0-H]-• of flavonol glycosides (Hvattum & Ekeberg 2003, J Mass Spectrom 38:43)
    ['C15H8O7-', 'odd'],
    ['C21H21O11', 'odd'], // neutral radical
    ['C16H13O6+', 'even'], // peonidin flavylium
  ])('%s is %s-electron', (f, state) => {
    expect(electronState(parseFormula(f))).toBe(state);
    expect(problems(f, { ...only, rdbe: { electrons: state } })).toEqual([]);
    expect(problems(f, { ...only, rdbe: { electrons: state === 'even' ? 'odd' : 'even' } })).toEqual([
      'electron-state',
    ]);
    expect(problems(f, { ...only, rdbe: { electrons: 'any' } })).toEqual([]);
  });

  it('needs RDBE ≥ 0 for molecules and ≥ −|z|/2 for ions (a protonated alcohol is −0.5)', () => {
    expect(problems('C6H16O', only)).toEqual(['rdbe-min']);
    expect(problems('CH5O+', only)).toEqual([]);
    expect(problems('C2H9O+', only)).toEqual(['rdbe-min']);
    expect(problems('C6H6', { ...only, rdbe: { max: 3 } })).toEqual(['rdbe-max']);
  });
});

describe('SENIOR rules (Senior 1951; Kind & Fiehn 2007, BMC Bioinformatics 8:105, rule 2)', () => {
  const senior = { rdbe: false, ratios: false, elementCounts: false } as const;
  it('passes real molecules and flags impossible graphs', () => {
    for (const f of ['C6H12O6', 'C21H20O11', 'H2O', 'C15H11O6+', 'CH5O+', 'C3H9PO4']) {
      expect(problems(f, senior), f).toEqual([]);
    }
    expect(problems('HO', senior)).toContain('senior-max-valence');
    expect(problems('CH6', senior)).toContain('senior-connectivity');
    expect(problems('C2H12O', senior)).toContain('senior-connectivity');
  });
});

describe('element ratios (Kind & Fiehn 2007, BMC Bioinformatics 8:105, rules 4–5)', () => {
  const ratios = { rdbe: false, senior: false, elementCounts: false } as const;
  it('H/C must lie in 0.2–3.1 in the common range (REFERENCE.md §5 [pub])', () => {
    expect(problems('C10H2O', ratios)).toEqual([]);
    expect(problems('C10HO', ratios)).toEqual(['ratio-h-c']);
    expect(problems('C2H6', ratios)).toEqual([]);
    expect(problems('CH4', ratios)).toEqual(['ratio-h-c']);
    expect(problems('CH4', { ...ratios, ratios: 'extended' })).toEqual([]);
    expect(problems('C2H8', ratios)).toEqual(['ratio-h-c']);
  });

  it('heteroatom ratios in the common range, wider in the extended one (from memory of the paper)', () => {
    expect(problems('C6H12O6', ratios)).toEqual([]);
    expect(problems('C2H4O5', ratios)).toEqual(['ratio-o-c']);
    expect(problems('C2H4O5', { ...ratios, ratios: 'extended' })).toEqual([]);
    expect(problems('C10H14N2O2P2S', ratios)).toEqual([]);
    expect(problems('C3H6N5', ratios)).toEqual(['ratio-n-c']);
    expect(problems('C5H10O4P2', ratios)).toEqual(['ratio-p-c']);
    expect(problems('H2O', ratios)).toEqual(['ratio-no-carbon']);
  });

  it('multi-element counts (rule 6, from memory of the paper)', () => {
    const counts = { rdbe: false, senior: false, ratios: false } as const;
    expect(problems('C40H60N5O25P3S2', counts)).toEqual(['element-counts']);
    expect(problems('C40H60N3O12P2S2', counts)).toEqual([]);
    expect(problems('C40H60N3O10P3S3', counts)).toEqual(['element-counts']);
  });
});

describe('filter switches', () => {
  it('lists every failure, and none with every filter off', () => {
    expect(problems('C2H12O6')).toEqual(
      expect.arrayContaining(['rdbe-min', 'senior-connectivity', 'ratio-h-c', 'ratio-o-c']),
    );
    expect(problems('C2H12O6', NO_FILTERS)).toEqual([]);
    expect(isPlausibleFormula(parseFormula('C21H21O11+'))).toBe(true);
  });

  it('the fast predicate agrees with the problem list (property, seeded)', () => {
    const variants = [
      {},
      NO_FILTERS,
      { ratios: 'extended' as const },
      { rdbe: { electrons: 'any' as const } },
    ];
    const predicates = variants.map((v) => createFormulaFilter(v));
    fc.assert(
      fc.property(formulaArb(2), (f) => {
        variants.forEach((v, i) => {
          expect(predicates[i]!(f.counts, f.charge)).toBe(formulaProblems(f, v).length === 0);
        });
      }),
      { seed: 17, numRuns: 500 },
    );
  });
});
