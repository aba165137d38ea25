// Worked examples from the literature, end to end through scoreSpectrum with the default rule set
// (test/fixtures/engine/worked-examples.json: each case names its source), and the near-isobaric traps of
// REFERENCE.md §2 (test/fixtures/engine/near-isobaric-traps.json). The tests assert what the chemistry
// settles: composition, aglycone ion formula (same-formula aglycones reported together), C/O linkage,
// ion type, status and a confidence level that is never 1 without a reference standard.
import { describe, expect, it } from 'vitest';
import { ELEMENT_SYMBOLS } from '../../../engine/chem/elements.js';
import { formulaEquals, formulaMz, parseFormula, subtractFormula } from '../../../engine/chem/formula.js';
import { STANDARD_CAUTIONS } from '../../../engine/report/build-result.js';
import { type SpectrumResult, SpectrumResultSchema } from '../../../engine/report/result.js';
import type { RuleSet } from '../../../engine/rules/schema.js';
import { compileRuleSet, scoreSpectrum } from '../../../engine/index.js';
import { loadDefaultRuleSet } from '../../../formats/ruleset-file.js';
import {
  caseSpectrum,
  compositionOf,
  exactMz,
  ionFormulaMz,
  linkagesOf,
  namesOf,
  readCases,
  type SpectrumCase,
  stackingOf,
} from './spectrum-cases.js';

const rules = (await loadDefaultRuleSet()).value as RuleSet;
const compiled = compileRuleSet(rules);

const results = new Map<string, SpectrumResult>();
const scored = (c: SpectrumCase): SpectrumResult => {
  let r = results.get(c.id);
  if (!r) {
    r = scoreSpectrum(caseSpectrum(c), compiled);
    results.set(c.id, r);
  }
  return r;
};

const worked = readCases('worked-examples.json');

const traps = readCases('near-isobaric-traps.json');

/** The checks every case file shares. */
function describeCases(title: string, cases: SpectrumCase[]) {
  describe.each(cases)(`${title}: $id`, (c) => {
    it('the case file is consistent: written-out m/z agree with their formulas, stated losses hold', () => {
      expect(c.source.length).toBeGreaterThan(10);
      for (const p of [c.precursor, ...c.peaks]) {
        if (p.formula !== undefined && p.mz !== undefined) {
          // REFERENCE.md §1/§3 [calc] values are rounded to 5 decimals
          expect(Math.abs(ionFormulaMz(p.formula) - p.mz)).toBeLessThan(1e-5 + 1e-9);
        }
      }
      if (c.loss) {
        const d = formulaMz(parseFormula(c.loss.from)) - formulaMz(parseFormula(c.loss.to));
        expect(d).toBeCloseTo(c.loss.mass, 5);
      }
      // The measurement errors are realistic for a Q-TOF (REFERENCE.md §6: 3–5 ppm).
      for (const p of [c.precursor, ...c.peaks]) expect(Math.abs(p.ppm ?? 0)).toBeLessThanOrEqual(3);
    });

    it('scores without fault to a result of the contract shape', () => {
      const r = scored(c);
      expect(() => SpectrumResultSchema.parse(r)).not.toThrow();
      expect(r.id).toBe(c.id);
      expect(r.status).toBe(c.expect.status);
    });

    const e = c.expect;
    if (e.status !== 'annotated') return;

    it('reads the precursor with an ion type that fits', () => {
      const r = scored(c);
      const top = r.candidates[0]!;
      if (e.ionTypes) {
        expect(e.ionTypes).toContain(r.precursor?.ionType);
        expect(e.ionTypes).toContain(top.ionType);
      }
      expect(top.formula).toBe(c.precursor.formula);
      expect(Math.abs(top.ppm)).toBeLessThanOrEqual(rules.tolerances.precursorPpm);
      // The reported precursor error is the one written into the case.
      expect(top.ppm).toBeCloseTo(c.precursor.ppm ?? 0, 1);
    });

    if (e.composition) {
      it(`ranks first the composition ${JSON.stringify(e.composition)}`, () => {
        expect(compositionOf(scored(c).candidates[0]!)).toEqual(e.composition);
      });
    }

    if (e.notCompositions) {
      it('never proposes the near-isobaric alternative composition', () => {
        for (const cand of scored(c).candidates) {
          for (const wrong of e.notCompositions!) expect(compositionOf(cand)).not.toEqual(wrong);
        }
      });
    }

    if (e.aglyconeFormula) {
      it(`names the aglycone ion ${e.aglyconeFormula} with every same-formula aglycone`, () => {
        const top = scored(c).candidates[0]!;
        expect(top.aglycone.formula).toBe(e.aglyconeFormula);
        const names = namesOf(top);
        for (const n of e.names ?? []) expect(names).toContain(n);
        // Same-formula library aglycones are all listed (REFERENCE.md §3: never silently one of them).
        const y0Ion = parseFormula(e.aglyconeFormula!);
        const sameFormula = rules.aglycones.filter((a) => {
          const f = parseFormula(a.formula);
          // A cation is its own Y0; a neutral aglycone's Y0 differs from it by the fragment's H±.
          const y0 =
            f.charge === 1
              ? f
              : {
                  counts: f.counts.map((n, i) => n + (i === hIndex ? y0Ion.charge : 0)),
                  charge: y0Ion.charge,
                };
          return y0.charge === y0Ion.charge && y0.counts.every((n, i) => n === y0Ion.counts[i]);
        });
        const library = sameFormula.map((a) => a.name);
        if (top.aglycone.name !== 'unknown') expect(library).toContain(top.aglycone.name);
        if (library.length > 0 && top.aglycone.name !== 'unknown') {
          for (const n of library) {
            // Cation readings ([M]+) exist in positive mode only.
            if (c.polarity === 'negative' && rules.aglycones.find((a) => a.name === n)!.formula.endsWith('+'))
              continue;
            expect(names).toContain(n);
          }
        }
      });
    }

    if (e.topology) {
      it(`stacks the residues as ${e.topology}`, () => {
        expect(stackingOf(scored(c).candidates[0]!)).toBe(e.topology);
      });
    }

    if (e.linkages) {
      it(`links the substituents ${JSON.stringify(e.linkages)}`, () => {
        expect(linkagesOf(scored(c).candidates[0]!)).toEqual(e.linkages);
      });
    }

    if (e.matched) {
      it('labels the key peaks', () => {
        const top = scored(c).candidates[0]!;
        for (const m of e.matched!) {
          const hit = top.matchedPeaks.find((p) => Math.abs(p.mz - m.mz) < 0.002);
          expect(hit, `peak ${m.mz}`).toBeDefined();
          if (m.label) expect(hit!.label).toBe(m.label);
          if (m.labelIncludes) expect(hit!.label).toContain(m.labelIncludes);
          if (m.formula) expect(hit!.formula).toBe(m.formula);
        }
      });
    }

    it('explains most of the intensity, with matched peaks that fit their formulas', () => {
      const r = scored(c);
      const top = r.candidates[0]!;
      expect(top.explainedIntensity).toBeGreaterThanOrEqual(rules.scoring.minExplained);
      expect(top.explainedIntensity).toBeLessThanOrEqual(1);
      for (const p of top.matchedPeaks) {
        const theory = formulaMz(parseFormula(p.formula));
        expect(Math.abs(((p.mz - theory) / theory) * 1e6)).toBeLessThanOrEqual(
          rules.tolerances.fragmentPpm + 0.5,
        );
        expect(Math.abs(p.ppm)).toBeLessThanOrEqual(rules.tolerances.fragmentPpm + 0.5);
      }
      // The fragments the case names are all accounted for by the winning candidate or the precursor.
      const explained = new Set(top.matchedPeaks.map((p) => Math.round(p.mz * 100)));
      for (const p of c.peaks) {
        if (p.note || p.formula === c.precursor.formula) continue;
        const m = exactMz(p);
        expect(
          [...explained].some((x) => Math.abs(x / 100 - m) < 0.011),
          `peak ${m.toFixed(5)} explained`,
        ).toBe(true);
      }
    });

    it('gives a confidence level of 2–5, never 1 (no reference standard), and carries the standard cautions', () => {
      const r = scored(c);
      for (const cand of r.candidates) {
        expect(cand.confidenceLevel).toBeGreaterThanOrEqual(2);
        expect(cand.confidenceLevel).toBeLessThanOrEqual(5);
      }
      for (const caution of STANDARD_CAUTIONS) expect(r.cautions).toContain(caution);
    });

    it('solves the fragmentation tree exactly and roots it at the precursor formula', () => {
      const r = scored(c);
      expect(r.tree?.solver).toBe('exact');
      expect(r.tree?.nodes[0]?.formula).toBe(c.precursor.formula);
    });

    it('reports a consistent tree: each edge loses parent minus child, the score is the sum of the edges', () => {
      const tree = scored(c).tree!;
      const formula = (id: number) => parseFormula(tree.nodes.find((n) => n.id === id)!.formula);
      let sum = 0;
      for (const edge of tree.edges) {
        const loss = subtractFormula(formula(edge.from), formula(edge.to));
        expect(formulaEquals({ ...loss, charge: 0 }, parseFormula(edge.loss))).toBe(true);
        sum += edge.score;
      }
      expect(sum).toBeCloseTo(tree.score ?? 0, 1);
      // Every node but the root has exactly one parent.
      expect(new Set(tree.edges.map((x) => x.to)).size).toBe(tree.edges.length);
      expect(tree.edges.length).toBe(tree.nodes.length - 1);
    });

    if (e.treeEdges) {
      it(`holds the published pathway in its tree (${e.treeSource})`, () => {
        const tree = scored(c).tree!;
        const id = (f: string) => tree.nodes.find((n) => n.formula === f)?.id;
        for (const [from, to] of e.treeEdges!) {
          expect(id(from), from).toBeDefined();
          expect(id(to), to).toBeDefined();
          const parent = tree.edges.find((x) => x.to === id(to))?.from;
          expect(tree.nodes.find((n) => n.id === parent)?.formula, `parent of ${to}`).toBe(from);
        }
      });
    }
  });
}

const hIndex = ELEMENT_SYMBOLS.indexOf('H');

describeCases('worked example', worked);
describeCases('near-isobaric trap', traps);

describe('near-isobaric traps: the pairs really are traps', () => {
  const pairs = new Map<string, SpectrumCase[]>();
  for (const t of traps) pairs.set(t.pair!, [...(pairs.get(t.pair!) ?? []), t]);

  it.each([...pairs.entries()])(
    '%s: same nominal precursor mass, apart by more than twice 5 ppm',
    (_, [a, b]) => {
      const ma = ionFormulaMz(a!.precursor.formula!);
      const mb = ionFormulaMz(b!.precursor.formula!);
      expect(Math.round(ma)).toBe(Math.round(mb));
      // REFERENCE.md §2 [calc]: 0.021129 Da (coumaroyl/dHex, caffeoyl/Hex), 0.015256 Da (feruloyl/HexA)
      expect([0.021129, 0.015256].some((d) => Math.abs(Math.abs(ma - mb) - d) < 2e-6)).toBe(true);
      expect(Math.abs(ma - mb)).toBeGreaterThan(2 * 5e-6 * ma);
    },
  );

  it.each([...pairs.entries()])(
    '%s: each spectrum scored at the other one’s precursor mass flips the composition',
    (_, [a, b]) => {
      // Same ladder, precursor of the partner: the engine must follow the precursor mass, not the nominal ladder.
      const swapped = { ...a!, precursor: b!.precursor };
      const r = scoreSpectrum(caseSpectrum(swapped), compiled);
      expect(r.status).toBe('annotated');
      expect(compositionOf(r.candidates[0]!)).toEqual(b!.expect.composition);
    },
  );
});

describe('near-isobaric traps at a wide tolerance', () => {
  it.each(traps)(
    '$id: at 60 ppm both readings of the pair are proposed (only mass accuracy separates them)',
    (c) => {
      const partner = traps.find((t) => t.pair === c.pair && t.id !== c.id)!;
      const r = scoreSpectrum(caseSpectrum(c), compiled, { precursorPpm: 60, fragmentPpm: 60 });
      const comps = r.candidates.map(compositionOf);
      expect(comps).toContainEqual(c.expect.composition);
      expect(comps).toContainEqual(partner.expect.composition);
    },
  );
});

describe('same formula, different ladder (REFERENCE.md §3)', () => {
  it('611.16066 with 465/303 is quercetin + Hex + dHex; with 449/287 it is cyanidin + 2 Hex', () => {
    // Kwon et al. 2019 (rutin 611 → 465, 303); REFERENCE.md §3 [calc]
    const rutin = scored(worked.find((c) => c.id === 'rutin-pos')!);
    const cyanidin = scored(worked.find((c) => c.id === 'cyanidin-dihexoside-611')!);
    expect(rutin.candidates[0]!.formula).toBe(cyanidin.candidates[0]!.formula);
    expect(compositionOf(rutin.candidates[0]!)).toEqual({ Hex: 1, dHex: 1 });
    expect(compositionOf(cyanidin.candidates[0]!)).toEqual({ Hex: 2 });
    expect(namesOf(rutin.candidates[0]!)).toContain('quercetin');
    expect(namesOf(cyanidin.candidates[0]!)).toContain('cyanidin');
  });
});
