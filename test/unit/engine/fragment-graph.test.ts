// Peak matching of a precursor hypothesis (`matchHypothesis`): nodes are formula explanations of peaks.
// Quercetin 3-O-hexoside [M+H]+ C21H21O12+ and its Y0 C15H11O7+ (m/z 303.0499): common practice.
import { describe, expect, it } from 'vitest';
import { interpretPrecursor } from '../../../engine/candidates/precursor.js';
import { matchHypothesis } from '../../../engine/graph/fragment-graph.js';
import { countsString, formulaKey, NE } from '../../../engine/graph/counts.js';
import { parseFormula } from '../../../engine/chem/formula.js';
import type { PrecursorHypothesis } from '../../../engine/candidates/precursor.js';
import { compileRuleSet } from '../../../engine/index.js';
import type { RuleSet } from '../../../engine/rules/schema.js';
import type { CleanSpectrum } from '../../../engine/spectrum/clean.js';
import { loadDefaultRuleSet } from '../../../formats/ruleset-file.js';
import { ionFormulaMz } from './spectrum-cases.js';

const rules = (await loadDefaultRuleSet()).value as RuleSet;
const compiled = compileRuleSet(rules);

/** A cleaned spectrum made by hand (peaks ascending, intensities summing to 1, the precursor last). */
function cleaned(peaks: [number, number][]): CleanSpectrum {
  const total = peaks.reduce((a, [, i]) => a + i, 0);
  return {
    mz: Float64Array.from(peaks, ([mz]) => mz),
    intensity: Float64Array.from(peaks, ([, i]) => i / total),
    isotopes: new Uint8Array(peaks.length),
    precursorIndex: peaks.length - 1,
    rawTotal: total,
    counts: { input: peaks.length, invalid: 0, merged: 0, isotopes: 0, noise: 0, capped: 0 },
  };
}

describe('matchHypothesis', () => {
  it('gives a formula that explains two peaks a node for each peak', () => {
    const precursor = ionFormulaMz('C21H21O12+');
    const y0 = ionFormulaMz('C15H11O7+');
    // Two peaks 6 ppm apart, each within the 10 ppm fragment tolerance of the Y0 (left apart, as a
    // reader that does not merge peaks would hand them over).
    const spectrum = cleaned([
      [y0 * (1 - 3e-6), 60],
      [y0 * (1 + 3e-6), 40],
      [precursor, 20],
    ]);
    const options = { precursorPpm: 5, fragmentPpm: 10, floorDa: 0.002, unknownY0MinRelative: 0.05 };
    const hypotheses = interpretPrecursor(precursor, 1, 'positive', spectrum, compiled, options);
    const h = hypotheses.find((x) => countsString(x.counts, x.charge) === 'C21H21O12+');
    expect(h).toBeDefined();
    const m = matchHypothesis(h!, spectrum, compiled, {
      fragmentPpm: 10,
      floorDa: 0.002,
      polarity: 'positive',
      genericMinRelative: 0.02,
      genericPerPeak: 2,
    });
    const y0Nodes = m.nodes.filter((n) => countsString(n.counts, n.charge) === 'C15H11O7+');
    expect(y0Nodes.map((n) => n.peak).sort()).toEqual([0, 1]);
    // Each node reads its own peak's error.
    expect(y0Nodes.map((n) => Math.round(n.ppm)).sort()).toEqual([-3, 3]);
  });

  it('keeps the peaks of one formula apart for a large aglycone too (a formula key of more than 43 bits)', () => {
    // An unknown aglycone of 64 carbons (the size of a saponin's) with one hexose, [M+H]+: a formula key with
    // room for a peak index in one exact number would need more than 53 bits.
    const ion = compiled.ionTypes.positive.find((t) => t.name === '[M+H]+')!;
    const hex = compiled.units.findIndex((u) => u.name === 'Hex');
    const compositionIndex = compiled.compositions.findIndex(
      (c) => c.units[hex] === 1 && c.units.reduce((a, x) => a + x, 0) === 1,
    );
    const composition = compiled.compositions[compositionIndex]!;
    const aglycone = parseFormula('C64H100O12').counts;
    const counts = new Int32Array(NE);
    for (let e = 0; e < NE; e++) counts[e] = aglycone[e]! + composition.counts[e]! + ion.delta.counts[e]!;
    const mz = ionFormulaMz(`${countsString(counts, 1)}`);
    const h: PrecursorHypothesis = {
      ion,
      counts,
      charge: 1,
      key: formulaKey(counts, 1),
      mz,
      ppm: 0,
      interpretations: [
        {
          ion,
          aglycone: { kind: 'unknown', counts: Int32Array.from(aglycone) },
          composition,
          compositionIndex,
        },
      ],
    };
    const y0 = ionFormulaMz('C64H101O12+');
    const spectrum = cleaned([
      [y0 * (1 - 3e-6), 60],
      [y0 * (1 + 3e-6), 40],
      [mz, 20],
    ]);
    const m = matchHypothesis(h, spectrum, compiled, {
      fragmentPpm: 10,
      floorDa: 0.002,
      polarity: 'positive',
      genericMinRelative: 0.02,
      genericPerPeak: 2,
    });
    const y0Nodes = m.nodes.filter((n) => countsString(n.counts, n.charge) === 'C64H101O12+');
    expect(formulaKey(y0Nodes[0]!.counts, 1) * 1024).toBeGreaterThan(Number.MAX_SAFE_INTEGER);
    expect(y0Nodes.map((n) => n.peak).sort()).toEqual([0, 1]);
  });
});
