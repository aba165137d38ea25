// When no Y0 is seen, a C-glycoside reading needs cross-ring ions of its C-linked sugar; one peak at one such
// loss is often a coincidence, so the engine asks for two different cleavages (or every one the rule set
// defines for the residue, if fewer). Vitexin [M-H]- and its ions: REFERENCE.md §4 (from memory); losses of
// 90 and 120 from a C-hexoside: PMC5632855.
import { describe, expect, it } from 'vitest';
import type { RuleSet } from '../../../engine/rules/schema.js';
import { compileRuleSet, scoreSpectrum } from '../../../engine/index.js';
import type { SpectrumResult } from '../../../engine/report/result.js';
import type { Spectrum } from '../../../engine/spectrum/spectrum.js';
import { loadDefaultRuleSet } from '../../../formats/ruleset-file.js';

const rules = (await loadDefaultRuleSet()).value as RuleSet;
const compiled = compileRuleSet(rules);

const PRECURSOR = 431.09837; // C21H19O10-, vitexin [M-H]-
const LOSS_90 = 341.06668; // C18H13O7-, 0,3X
const LOSS_120 = 311.05611; // C17H11O6-, 0,2X

function vitexin(peaks: [number, number][]): Spectrum {
  return { id: 'vitexin', polarity: 'negative', precursor: { mz: PRECURSOR, charge: -1 }, peaks };
}

/** Whether some candidate reads the spectrum as apigenin (or a same-formula aglycone) with a C-linked Hex. */
function cHexCandidate(r: SpectrumResult): boolean {
  return r.candidates.some(
    (c) =>
      c.aglycone.formula === 'C15H9O5-' &&
      c.substituents.length === 1 &&
      c.substituents[0]!.residue === 'Hex' &&
      c.substituents[0]!.linkage === 'C',
  );
}

describe('cross-ring evidence for a C-glycoside without Y0', () => {
  it('two different cleavages (−90 and −120) give the C-hexoside', () => {
    const r = scoreSpectrum(
      vitexin([
        [PRECURSOR, 45],
        [LOSS_90, 30],
        [LOSS_120, 100],
      ]),
      compiled,
    );
    expect(r.status).toBe('annotated');
    expect(cHexCandidate(r)).toBe(true);
  });

  it('one cross-ring peak alone does not', () => {
    const r = scoreSpectrum(
      vitexin([
        [PRECURSOR, 45],
        [LOSS_120, 100],
      ]),
      compiled,
    );
    expect(cHexCandidate(r)).toBe(false);
  });

  it('one peak is enough when the rule set defines a single cleavage for the residue', () => {
    const single: RuleSet = {
      ...rules,
      crossRing: rules.crossRing.filter((x) => x.residue !== 'Hex' || x.name === '0,2X Hex'),
    };
    const r = scoreSpectrum(
      vitexin([
        [PRECURSOR, 45],
        [LOSS_120, 100],
      ]),
      compileRuleSet(single),
    );
    expect(r.status).toBe('annotated');
    expect(cHexCandidate(r)).toBe(true);
  });
});
