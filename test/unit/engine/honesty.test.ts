// Honesty of the output: cautions, ties, metadata that breaks a tie (and says so), decoys left unassigned
// with a reason code, and a scorer that never throws whatever the peaks.
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { STANDARD_CAUTIONS } from '../../../engine/report/build-result.js';
import { SpectrumResultSchema } from '../../../engine/report/result.js';
import type { RuleSet } from '../../../engine/rules/schema.js';
import { compileRuleSet, scoreSpectrum } from '../../../engine/index.js';
import type { Spectrum } from '../../../engine/spectrum/spectrum.js';
import { loadDefaultRuleSet } from '../../../formats/ruleset-file.js';
import {
  caseSpectrum,
  compositionOf,
  ionFormulaMz,
  namesOf,
  readCases,
  stackingOf,
} from './spectrum-cases.js';
import { rng as mulberry32 } from '../formats/read-helpers.js';

const rules = (await loadDefaultRuleSet()).value as RuleSet;
const compiled = compileRuleSet(rules);
const worked = readCases('worked-examples.json');
const traps = readCases('near-isobaric-traps.json');
const byId = (id: string) => worked.find((c) => c.id === id)!;
const classOf = (name: string) => rules.aglycones.find((a) => a.name === name)?.class ?? '';
const isCation = (name: string) =>
  rules.aglycones
    .find((a) => a.name === name)
    ?.formula.trim()
    .endsWith('+') ?? false;

/** Reason codes an unassigned result may carry (engine/score/score-spectrum.ts, engine/report/build-result.ts). */
const UNASSIGNED_CODES = ['no-peaks', 'no-precursor-match', 'no-candidate', 'insufficient-evidence'];

describe('cautions', () => {
  it.each([...worked, ...traps])('every annotated result carries the standard cautions: $id', (c) => {
    const r = scoreSpectrum(caseSpectrum(c), compiled);
    expect(r.status).toBe('annotated');
    for (const caution of STANDARD_CAUTIONS) expect(r.cautions).toContain(caution);
  });

  it('says when the precursor is not in the MS2 spectrum', () => {
    const c = byId('cyanidin-3-glucoside-pos');
    const s = caseSpectrum(c);
    const withoutPrecursor = { ...s, peaks: s.peaks.filter(([m]) => Math.abs(m - s.precursor.mz) > 0.01) };
    const r = scoreSpectrum(withoutPrecursor, compiled);
    expect(r.status).toBe('annotated');
    expect(r.cautions.length).toBeGreaterThan(STANDARD_CAUTIONS.length);
  });
});

describe('ties', () => {
  it('same-formula aglycones are one candidate with alternatives and a note, never silently one of them', () => {
    // cyanidin⁺ = kaempferol/luteolin [M+H]⁺ (REFERENCE.md §3 [calc])
    const r = scoreSpectrum(caseSpectrum(byId('cyanidin-3-glucoside-pos')), compiled);
    const top = r.candidates[0]!;
    expect(namesOf(top)).toEqual(expect.arrayContaining(['cyanidin', 'kaempferol', 'luteolin']));
    expect(top.aglycone.alternatives.length).toBeGreaterThan(0);
    expect(top.notes?.length ?? 0).toBeGreaterThan(0);
    // Only one candidate per (formula, stacking): the tie is not hidden as a lower rank either.
    const sameStack = r.candidates.filter(
      (x) => x.aglycone.formula === top.aglycone.formula && stackingOf(x) === stackingOf(top),
    );
    expect(sameStack.length).toBe(1);
  });

  it('stackings the spectrum cannot separate are listed with the candidate as tied, with a caution', () => {
    // Cyanidin + 2 Hex with Y1 and Y0 only: one chain or two positions explain the same ions.
    const r = scoreSpectrum(caseSpectrum(byId('cyanidin-dihexoside-611')), compiled);
    const top = r.candidates[0]!;
    const other = top.otherTopologies?.[0];
    expect(other).toBeDefined();
    expect(new Set([stackingOf(top), stackingOf({ topology: other!.topology })])).toEqual(
      new Set(['[Hex][Hex]', '[Hex[Hex]]']),
    );
    expect(other!.tiedWithBest).toBe(true);
    // One structure, one rank: the next candidate is another composition or aglycone reading, not a restacking.
    for (const c of r.candidates.slice(1))
      expect([c.aglycone.formula, c.substituents]).not.toEqual([top.aglycone.formula, top.substituents]);
    expect(r.cautions.some((c) => c.includes('stacking of some candidates is not settled'))).toBe(true);
  });

  it('a stacking the ladder does support is not flagged as tied (Pen terminal: 581 → 449 → 287)', () => {
    // common practice, REFERENCE.md §4
    const r = scoreSpectrum(caseSpectrum(byId('cyanidin-hexoside-pentoside-581')), compiled);
    const top = r.candidates[0]!;
    expect(stackingOf(top)).toBe('[Hex[Pen]]');
    for (const o of top.otherTopologies ?? []) {
      expect(o.tiedWithBest).toBeUndefined();
      expect(top.score).toBeGreaterThan(o.score);
    }
  });

  it.each([...worked, ...traps])('each rank is a distinct structure, stackings aside: $id', (c) => {
    // A structure is the precursor formula, the aglycone ion and the residues with their O/C linkages; its
    // other stackings are listed with it (otherTopologies), never ranked as further candidates.
    const r = scoreSpectrum(caseSpectrum(c), compiled);
    const keys = r.candidates.map((x) =>
      [
        x.formula,
        x.aglycone.formula,
        x.substituents
          .map((s) => `${s.residue}/${s.linkage}`)
          .sort()
          .join(','),
      ].join('|'),
    );
    expect(new Set(keys).size).toBe(keys.length);
    for (const x of r.candidates) {
      for (const o of x.otherTopologies ?? []) {
        expect(o.topology).not.toBe(x.topology);
        expect(o.score).toBeLessThanOrEqual(x.score);
      }
    }
  });

  it.each([...worked, ...traps])('the name reported first agrees with the ion type reported: $id', (c) => {
    // A flavylium aglycone is observed as [M]+ (REFERENCE.md §1), a neutral aglycone never is.
    const r = scoreSpectrum(caseSpectrum(c), compiled);
    for (const cand of r.candidates) {
      if (cand.aglycone.name === 'unknown') continue;
      expect(cand.ionType === '[M]+').toBe(isCation(cand.aglycone.name));
    }
  });
});

describe('metadata that breaks a tie (and says so)', () => {
  const c = byId('cyanidin-hexoside-pentoside-581');
  const base = caseSpectrum(c);
  const plain = scoreSpectrum(base, compiled);

  it('λmax 520 nm names the anthocyanidin first and says the absorbance broke the tie', () => {
    // the pigment's visible absorbance near 520 nm marks anthocyanins (REFERENCE.md §3, common practice)
    const r = scoreSpectrum({ ...base, metadata: { lambdaMaxNm: 520 } }, compiled);
    const top = r.candidates[0]!;
    expect(top.aglycone.name).toBe('cyanidin');
    expect(top.aglycone.class).toBe('anthocyanidin');
    expect(top.aglycone.alternatives).toEqual(expect.arrayContaining(['kaempferol', 'luteolin']));
    expect(top.ionType).toBe('[M]+');
    expect(r.precursor?.ionType).toBe('[M]+');
    expect(stackingOf(top)).toBe('[Hex[Pen]]');
    expect(top.topology).toBe('cyanidin[Hex[Pen]]');
    // One more caution than without the metadata, naming the value and the chosen aglycone.
    expect(r.cautions.length).toBe(plain.cautions.length + 1);
    const added = r.cautions.filter((x) => !plain.cautions.includes(x));
    expect(added).toHaveLength(1);
    expect(added[0]).toContain('520');
    expect(added[0]).toContain('cyanidin');
  });

  it('metadata changes the names only, never the scores or compositions', () => {
    const r = scoreSpectrum({ ...base, metadata: { lambdaMaxNm: 520 } }, compiled);
    expect(r.candidates.map((x) => [x.score, compositionOf(x), x.aglycone.formula])).toEqual(
      plain.candidates.map((x) => [x.score, compositionOf(x), x.aglycone.formula]),
    );
  });

  it('without metadata no tie-breaking caution is added', () => {
    expect(plain.cautions).toEqual(STANDARD_CAUTIONS);
  });

  // Engine bug: when metadata picks a neutral aglycone from a group merged with a flavylium reading, the
  // candidate and precursor keep the flavylium's ion type [M]+ (engine/report/build-result.ts, chooseName).
  it('λmax 350 nm names a flavonol/flavone first, reported as the [M+H]+ ion it must be', () => {
    // flavonols and flavones absorb below ~380 nm (common practice); a neutral aglycone is never [M]+
    const r = scoreSpectrum({ ...base, metadata: { lambdaMaxNm: 350 } }, compiled);
    const top = r.candidates[0]!;
    expect(classOf(top.aglycone.name)).not.toMatch(/anthocyan/);
    expect(top.aglycone.alternatives).toContain('cyanidin');
    expect(r.cautions.some((x) => x.includes('350'))).toBe(true);
    expect(top.ionType).toBe('[M+H]+');
    expect(r.precursor?.ionType).toBe('[M+H]+');
  });

  // Engine bug: λmax below 480 nm "breaks" a tie among names that are all non-anthocyanidins and adds a
  // caution saying so, although nothing was separated (engine/report/build-result.ts, chooseName).
  it('λmax that separates nothing (no anthocyanidin among the names) changes nothing and claims nothing', () => {
    // luteolin 7-O-glucoside [M−H]⁻ 447 → 285 (PMC4885406, Table II): kaempferol, fisetin, luteolin and
    // scutellarein share C15H10O6 and all absorb below ~380 nm (common practice), so 350 nm cannot break the tie.
    const lut = caseSpectrum(byId('luteolin-7-glucoside-neg'));
    const without = scoreSpectrum(lut, compiled);
    for (const lambdaMaxNm of [350, 520]) {
      const r = scoreSpectrum({ ...lut, metadata: { lambdaMaxNm } }, compiled);
      expect(namesOf(r.candidates[0]!).sort()).toEqual(namesOf(without.candidates[0]!).sort());
      expect(r.cautions, `λmax ${lambdaMaxNm}`).toEqual(without.cautions);
    }
  });

  // Engine bug: same as the λmax 350 nm case: kaempferol picked by class is reported as [M]+.
  it('a compound class given with the spectrum picks that class, reported with its own ion type', () => {
    const r = scoreSpectrum({ ...base, metadata: { compoundClass: 'flavonol' } }, compiled);
    const top = r.candidates[0]!;
    expect(classOf(top.aglycone.name)).toBe('flavonol');
    expect(top.ionType).toBe('[M+H]+');
  });
});

describe('decoys end unassigned with a reason code', () => {
  it('a spectrum with no peaks → unassigned, no-peaks', () => {
    const r = scoreSpectrum({ id: 'empty', precursor: { mz: 449.10784, charge: 1 }, peaks: [] }, compiled);
    expect(r.status).toBe('unassigned');
    expect(r.reason?.code).toBe('no-peaks');
    expect(r.candidates).toEqual([]);
  });

  it('seeded random peak lists (random precursors) → unassigned', () => {
    const rnd = mulberry32(20261202);
    for (let n = 0; n < 40; n++) {
      const prec = 250 + rnd() * 800;
      const peaks: [number, number][] = [[prec, 10 + rnd() * 90]];
      for (let i = 0; i < 15; i++) peaks.push([60 + rnd() * (prec - 60), 1 + rnd() * 99]);
      const r = scoreSpectrum(
        { id: `random-${n}`, precursor: { mz: prec, charge: n % 2 ? 1 : -1 }, peaks },
        compiled,
      );
      expect(r.status, `random-${n}`).toBe('unassigned');
      expect(UNASSIGNED_CODES).toContain(r.reason?.code);
    }
  });

  it('seeded random fragments under glycoside precursor masses → unassigned', () => {
    // Precursor m/z of real glycosides (REFERENCE.md §3–4 [calc]); the fragments are random.
    const precursors: [number, number][] = [
      [611.16066, 1],
      [449.10784, 1],
      [463.0882, -1],
      [433.11292, 1],
      [431.09837, -1],
    ];
    const rnd = mulberry32(7);
    for (let n = 0; n < 40; n++) {
      const [prec, charge] = precursors[n % precursors.length]!;
      const peaks: [number, number][] = [[prec, 10 + rnd() * 90]];
      for (let i = 0; i < 12; i++) peaks.push([100 + rnd() * (prec - 100), 1 + rnd() * 99]);
      const r = scoreSpectrum({ id: `glyco-random-${n}`, precursor: { mz: prec, charge }, peaks }, compiled);
      expect(r.status, `glyco-random-${n}`).toBe('unassigned');
      expect(UNASSIGNED_CODES).toContain(r.reason?.code);
    }
  });

  it('a peptide fragment ladder (Leu-enkephalin YGGFL [M+H]+ 556.2766) → unassigned', () => {
    // b/a/y ions of Leu-enkephalin, a common calibrant: b4 425.18, a4 397.19, b3 278.11, b2 221.09, y2 279.17,
    // y1 132.10, Tyr immonium 136.08 (from memory; m/z computed from the formulas)
    const ions: [string, number][] = [
      ['C28H38N5O7+', 30],
      ['C22H25N4O5+', 60],
      ['C21H25N4O4+', 40],
      ['C13H16N3O4+', 50],
      ['C11H13N2O3+', 35],
      ['C15H23N2O3+', 45],
      ['C6H14NO2+', 20],
      ['C8H10NO+', 100],
    ];
    expect(ionFormulaMz('C28H38N5O7+')).toBeCloseTo(556.2766, 4);
    const r = scoreSpectrum(
      {
        id: 'leu-enkephalin',
        precursor: { mz: ionFormulaMz('C28H38N5O7+'), charge: 1 },
        peaks: ions.map(([f, i]) => [ionFormulaMz(f), i]),
      },
      compiled,
    );
    expect(r.status).toBe('unassigned');
    expect(UNASSIGNED_CODES).toContain(r.reason?.code);
  });

  it('an amino-acid residue ladder under a glycoside-sized precursor → unassigned', () => {
    // Peptide-like: successive losses of Gly 57.02146, Ala 71.03711, Pro 97.05276, Leu 113.08406 (monoisotopic
    // residue masses, common practice) from the rutin [M+H]+ m/z 611.16066 (REFERENCE.md §3 [calc]).
    const prec = 611.16066;
    const peaks: [number, number][] = [[prec, 40]];
    let m = prec;
    for (const [loss, i] of [
      [113.08406, 100],
      [97.05276, 70],
      [57.02146, 55],
      [71.03711, 80],
      [113.08406, 30],
    ] as [number, number][]) {
      m -= loss;
      peaks.push([m, i]);
    }
    const r = scoreSpectrum({ id: 'residue-ladder', precursor: { mz: prec, charge: 1 }, peaks }, compiled);
    expect(r.status).toBe('unassigned');
    expect(UNASSIGNED_CODES).toContain(r.reason?.code);
  });
});

describe('bad input never crashes the scorer', () => {
  it('NaN and infinite peaks are dropped by the clean-up: same result as without them', () => {
    const s = caseSpectrum(byId('cyanidin-3-glucoside-pos'));
    const dirty: Spectrum = {
      ...s,
      peaks: [
        [Number.NaN, 10],
        ...s.peaks,
        [300, Number.NaN],
        [Number.POSITIVE_INFINITY, 5],
        [310, Number.NEGATIVE_INFINITY],
      ],
    };
    const clean = scoreSpectrum(s, compiled);
    const r = scoreSpectrum(dirty, compiled);
    expect(r.status).toBe('annotated');
    expect(r.candidates).toEqual(clean.candidates);
  });

  it('a spectrum of NaN peaks only → unassigned no-peaks', () => {
    const r = scoreSpectrum(
      {
        id: 'nan',
        precursor: { mz: 449.10784, charge: 1 },
        peaks: [
          [Number.NaN, Number.NaN],
          [Number.NaN, 1],
        ],
      },
      compiled,
    );
    expect(r.status).toBe('unassigned');
    expect(r.reason?.code).toBe('no-peaks');
  });

  it('scoreSpectrum never throws and never faults, whatever the peaks (property, seeded)', () => {
    const value = fc.oneof(
      { weight: 8, arbitrary: fc.double({ min: 0, max: 2500, noNaN: true }) },
      {
        weight: 1,
        arbitrary: fc.constantFrom(
          Number.NaN,
          Number.POSITIVE_INFINITY,
          Number.NEGATIVE_INFINITY,
          0,
          -1,
          1e-300,
          1e300,
        ),
      },
    );
    const spectrumArb = fc.record({
      mz: fc.oneof(
        fc.double({ min: 50, max: 2000, noNaN: true }),
        fc.constantFrom(611.16066, 449.10784, 463.0882, 433.11292),
      ),
      charge: fc.constantFrom(1, -1, 2, -2, undefined),
      peaks: fc.array(fc.tuple(value, value), { maxLength: 80 }),
      lambda: fc.option(fc.double({ min: 200, max: 700, noNaN: true }), { nil: undefined }),
    });
    fc.assert(
      fc.property(spectrumArb, ({ mz, charge, peaks, lambda }) => {
        const s: Spectrum = {
          id: 'prop',
          precursor: { mz, ...(charge === undefined ? {} : { charge }) },
          peaks,
          ...(lambda === undefined ? {} : { metadata: { lambdaMaxNm: lambda } }),
        };
        const r = scoreSpectrum(s, compiled);
        expect(r.status).not.toBe('error');
        expect(() => SpectrumResultSchema.parse(r)).not.toThrow();
        if (r.status === 'unassigned') expect(UNASSIGNED_CODES).toContain(r.reason?.code);
        for (const cand of r.candidates) {
          expect(cand.confidenceLevel).toBeGreaterThanOrEqual(2);
          expect(cand.explainedIntensity).toBeGreaterThanOrEqual(0);
          expect(cand.explainedIntensity).toBeLessThanOrEqual(1);
        }
      }),
      { seed: 1202, numRuns: 120 },
    );
  });

  it('real spectra perturbed with stray peaks still score without fault (property, seeded)', () => {
    fc.assert(
      fc.property(
        fc.constantFrom(...worked, ...traps),
        fc.array(
          fc.tuple(
            fc.double({ min: 50, max: 700, noNaN: true }),
            fc.double({ min: 0.1, max: 100, noNaN: true }),
          ),
          {
            maxLength: 30,
          },
        ),
        (c, extra) => {
          const s = caseSpectrum(c);
          const r = scoreSpectrum({ ...s, peaks: [...s.peaks, ...extra] }, compiled);
          expect(r.status).not.toBe('error');
          expect(() => SpectrumResultSchema.parse(r)).not.toThrow();
        },
      ),
      { seed: 31, numRuns: 50 },
    );
  });
});
