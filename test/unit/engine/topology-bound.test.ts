// The engine passes over candidate stackings whose bound (every admitted peak reading at its best weight, only
// the missing ions no reading could supply) shows they can neither be kept nor move the topology search. That
// must change nothing: scored exhaustively, every spectrum gets the same result, to the last digit.
import { describe, expect, it } from 'vitest';
import { generateSet } from '../../../bench/sim/generate.js';
import type { RuleSet } from '../../../engine/rules/schema.js';
import { compileRuleSet, scoreSpectrum } from '../../../engine/index.js';
import type { Spectrum } from '../../../engine/spectrum/spectrum.js';
import { loadDefaultRuleSet } from '../../../formats/ruleset-file.js';
import { caseSpectrum, readCases } from './spectrum-cases.js';

const compiled = compileRuleSet((await loadDefaultRuleSet()).value as RuleSet);

function sameEitherWay(spectra: readonly Spectrum[]): void {
  for (const s of spectra) {
    const pruned = scoreSpectrum(s, compiled);
    const full = scoreSpectrum(s, compiled, { exhaustive: true });
    expect(pruned, s.id).toEqual(full);
  }
}

describe('topologies passed over on their bound', () => {
  it('change no result of the worked examples and near-isobaric traps', () => {
    const cases = [...readCases('worked-examples.json'), ...readCases('near-isobaric-traps.json')];
    sameEitherWay(cases.map(caseSpectrum));
  });

  it('change no result of 400 seeded simulated spectra (O- and C-glycosides, up to 7 units, decoys)', () => {
    // Simulated data (bench/sim), seeded: large compositions go through the local search, small ones are
    // enumerated, so both paths are covered.
    const set = generateSet({ count: 400, seed: 11, decoyFraction: 0.1 });
    const spectra = set.map((x) => x.spectrum);
    expect(set.some((x) => !x.truth.decoy && x.truth.residues.length + x.truth.acyls.length >= 5)).toBe(true);
    sameEitherWay(spectra);
  });
});
