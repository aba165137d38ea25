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
import { ionFormulaMz } from './spectrum-cases.js';

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

// Apigenin 8-C-hexoside with an O-linked deoxyhexose, [M-H]- C27H29O14- (composed here from the vitexin case
// above; not a published spectrum). Its cross-ring ions come from the whole molecule and, once the dHex is
// gone, from the C-glycosidic core (vitexin, C21H19O10-).
describe('cross-ring evidence must tie the aglycone', () => {
  const mz = ionFormulaMz;
  const precursor = mz('C27H29O14-');
  const whole = [mz('C24H23O11-'), mz('C23H21O10-')]; // whole molecule −90, −120
  const core = [mz('C18H13O7-'), mz('C17H11O6-')]; // core −90, −120
  const spectrum = (peaks: number[]): Spectrum => ({
    id: 'c-hex-o-dhex',
    polarity: 'negative',
    precursor: { mz: precursor, charge: -1 },
    peaks: [[precursor, 40], ...peaks.map((p) => [p, 60] as [number, number])],
  });
  const apigeninCHex = (r: SpectrumResult) =>
    r.candidates.some(
      (c) =>
        c.aglycone.formula === 'C15H9O5-' &&
        c.substituents.some((x) => x.residue === 'Hex' && x.linkage === 'C') &&
        c.substituents.some((x) => x.residue === 'dHex'),
    );

  it('cross-ring ions of the whole molecule alone do not back an aglycone whose composition holds more', () => {
    // The same two peaks would back any aglycone whose composition makes up the rest of the precursor. They do
    // back a di-C-glycoside, whose whole molecule is its core: chrysin + two C-Hex has this very formula.
    const r = scoreSpectrum(spectrum(whole), compiled);
    expect(apigeninCHex(r)).toBe(false);
    expect(r.candidates[0]?.topology).toBe('chrysin[C-Hex][C-Hex]');
  });

  it('one cross-ring ion of the core with the whole molecule’s gives the C-hexoside of that aglycone', () => {
    const r = scoreSpectrum(spectrum([...whole, core[1]!]), compiled);
    expect(r.status).toBe('annotated');
    expect(apigeninCHex(r)).toBe(true);
  });

  it('two cross-ring ions of the core give it too', () => {
    const r = scoreSpectrum(spectrum(core), compiled);
    expect(r.status).toBe('annotated');
    expect(apigeninCHex(r)).toBe(true);
  });
});
