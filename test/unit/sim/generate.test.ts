import { describe, expect, it } from 'vitest';
import { formatFormula, formulaMz, parseFormula } from '../../../engine/chem/formula.js';
import { SpectrumSchema } from '../../../engine/spectrum/spectrum.js';
import { f, sum, withCharge } from '../../../bench/sim/chem.js';
import { fragmentIon, precursorIon } from '../../../bench/sim/fragments.js';
import { generateSet, simulateOne } from '../../../bench/sim/generate.js';
import { Rng } from '../../../bench/sim/prng.js';
import { randomGlycoside, unknownAglycone } from '../../../bench/sim/structure.js';
import { ACYLS, AGLYCONES, RESIDUES } from '../../../bench/sim/tables.js';
import { SimTruthSchema } from '../../../bench/sim/truth.js';
import { loadDefaultRuleSet } from '../../../formats/ruleset-file.js';

const set = generateSet({ count: 600, seed: 99, includePeaks: true });

describe('simulated set: determinism', () => {
  it('is the same for the same seed and differs for another', () => {
    const again = generateSet({ count: 50, seed: 99, includePeaks: true });
    expect(JSON.stringify(again)).toBe(JSON.stringify(set.slice(0, 50)));
    const other = generateSet({ count: 50, seed: 100 });
    expect(other.map((x) => x.spectrum.precursor.mz)).not.toEqual(
      set.slice(0, 50).map((x) => x.spectrum.precursor.mz),
    );
  });

  it('makes spectrum i depend only on (seed, i)', () => {
    expect(JSON.stringify(simulateOne({ count: 1, seed: 99, includePeaks: true }, 123))).toBe(
      JSON.stringify(set[123]),
    );
  });
});

describe('simulated set: spectra', () => {
  it('validates against the spectrum schema and says it is simulated', () => {
    for (const { spectrum, truth } of set) {
      expect(SpectrumSchema.safeParse(spectrum).success).toBe(true);
      expect(SimTruthSchema.safeParse(truth).success).toBe(true);
      expect(spectrum.metadata?.simulated).toBe(true);
      expect(spectrum.peaks.length).toBeGreaterThan(0);
      expect(spectrum.peaks.length).toBeLessThanOrEqual(100);
      for (let i = 1; i < spectrum.peaks.length; i++)
        expect(spectrum.peaks[i]![0]).toBeGreaterThanOrEqual(spectrum.peaks[i - 1]![0]);
    }
  });

  it('keeps precursors under 1,200 Da and mixes every ion type, decoys and unknowns', () => {
    const big = generateSet({ count: 3000, seed: 5 });
    const types = new Set(big.map((x) => x.truth.ionType));
    for (const t of [
      '[M]+',
      '[M+H]+',
      '[M+Na]+',
      '[M+K]+',
      '[M+NH4]+',
      '[M+2H]2+',
      '[M-H]-',
      '[M+HCOO]-',
      '[M+Cl]-',
      '[M-2H]2-',
    ]) {
      expect(types.has(t)).toBe(true);
    }
    const glyc = big.filter((x) => !x.truth.decoy);
    const decoys = big.length - glyc.length;
    expect(decoys / big.length).toBeGreaterThan(0.07);
    expect(decoys / big.length).toBeLessThan(0.13);
    const unknown = glyc.filter((x) => x.truth.aglycone?.name === 'unknown').length / glyc.length;
    expect(unknown).toBeGreaterThan(0.1);
    expect(unknown).toBeLessThan(0.16);
    expect(glyc.some((x) => x.truth.cGlycoside)).toBe(true);
    expect(glyc.some((x) => x.truth.acyls.length === 1)).toBe(true);
    expect(glyc.some((x) => x.truth.sites.length >= 2)).toBe(true);
    expect(glyc.some((x) => x.truth.coIsolated)).toBe(true);
    // Singly charged fragments of doubly charged precursors are recorded above the precursor m/z.
    const doubly = glyc.filter((x) => Math.abs(x.truth.charge) === 2);
    expect(doubly.some((x) => x.spectrum.peaks.some(([mz]) => mz > x.spectrum.precursor.mz + 5))).toBe(true);
    const counts = new Set(glyc.map((x) => x.truth.residues.length));
    expect([...counts].sort()).toEqual([1, 2, 3, 4, 5]);
    for (const x of glyc) {
      const m = parseFormula(x.truth.precursorFormula!);
      expect(formulaMz(m) * Math.abs(m.charge)).toBeLessThan(1200 + 80);
      expect(x.truth.acyls.length).toBeLessThanOrEqual(1);
      // Flavylium glycosides only as [M]+; C-glycosides only on flavones, with Hex or Pen.
      if (x.truth.aglycone!.class === 'anthocyanidin') expect(x.truth.ionType).toBe('[M]+');
      for (const r of x.truth.residues) {
        if (r.linkage === 'C') {
          expect(x.truth.aglycone!.class).toBe('flavone');
          expect(['Hex', 'Pen']).toContain(r.residue);
        }
      }
    }
  });
});

describe('simulated set: truth consistent with peaks', () => {
  it('precursor formula = aglycone + residues + acyls + adduct, and its m/z is the measured one within 5 ppm', () => {
    for (const { spectrum, truth } of set) {
      if (truth.decoy) continue;
      const parts = [
        parseFormula(truth.aglycone!.neutralFormula),
        ...truth.residues.map((r) => f(RESIDUES[r.residue as keyof typeof RESIDUES])),
      ];
      for (const a of truth.acyls) parts.push(f(ACYLS[a as keyof typeof ACYLS].formula));
      const m = sum(...parts);
      expect(formatFormula(precursorIon(m, truth.ionType as Parameters<typeof precursorIon>[1]))).toBe(
        truth.precursorFormula,
      );
      expect(truth.precursorMz).toBeCloseTo(formulaMz(parseFormula(truth.precursorFormula!)), 5);
      expect(Math.abs(spectrum.precursor.mz / truth.precursorMz - 1) * 1e6).toBeLessThan(6.5);
      const ag = parseFormula(truth.aglycone!.neutralFormula);
      expect(truth.aglycone!.ionFormula).toBe(
        formatFormula(fragmentIon(ag, truth.ionType as Parameters<typeof fragmentIon>[1])),
      );
    }
  });

  it('every labelled peak sits within the simulated mass error of its formula', () => {
    let checked = 0;
    for (const { truth } of set) {
      const sys = truth.instrument!.systematicPpm;
      for (const p of truth.peaks!) {
        if (!p.formula || p.theoreticalMz === undefined) continue;
        expect(p.theoreticalMz).toBeCloseTo(formulaMz(parseFormula(p.formula)), 5);
        // Systematic ±2–4 ppm, random ≤ 3σ (σ ≤ 2 ppm), plus a 0.15 mDa absolute term.
        const ppm = ((p.mz - p.theoreticalMz) / p.theoreticalMz) * 1e6;
        expect(Math.abs(ppm - sys)).toBeLessThan(6.5 + (1e6 * 0.0008) / p.theoreticalMz);
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(3000);
  });

  it('labels the Y0 peak with the truth aglycone ion formula, and its residues add up along the ladder', () => {
    let y0 = 0;
    for (const { truth } of set) {
      if (truth.decoy) continue;
      for (const p of truth.peaks!) {
        if (p.labels[0] === 'Y0' && p.formula) {
          expect(p.formula).toBe(truth.aglycone!.ionFormula);
          y0++;
        }
      }
    }
    expect(y0).toBeGreaterThan(300);
  });

  it('gives isotope peaks the ¹³C spacing and a ratio from the formula', () => {
    for (const { truth } of set.slice(0, 100)) {
      const peaks = truth.peaks!;
      for (const p of peaks) {
        if (p.kinds.length !== 1 || p.kinds[0] !== 'isotope' || !p.labels[0]!.endsWith(' M+1')) continue;
        const parentLabel = p.labels[0]!.replace(/ M\+1$/, '');
        const parent = peaks.find((q) => q.labels[0] === parentLabel && q.kinds.length === 1 && q.formula);
        if (!parent) continue;
        const z = Math.abs(parseFormula(parent.formula!).charge);
        expect((p.theoreticalMz! - parent.theoreticalMz!) * z).toBeCloseTo(1.0034, 2);
      }
    }
  });
});

describe('unknown aglycones', () => {
  it('never have the ion formula of a library aglycone of the default rule set', async () => {
    const file = await loadDefaultRuleSet();
    const keys = new Set(
      file.value!.aglycones.map((a) => {
        const x = parseFormula(a.formula);
        return formatFormula(x.charge === 1 ? x : withCharge(sum(x, f('H')), 1));
      }),
    );
    const rng = new Rng(2024);
    for (let i = 0; i < 3000; i++) {
      const u = unknownAglycone(rng);
      const key = formatFormula(u.formula.charge === 1 ? u.formula : withCharge(sum(u.formula, f('H')), 1));
      expect(keys.has(key)).toBe(false);
      expect(AGLYCONES.some((a) => a.formula === formatFormula(u.formula))).toBe(false);
    }
  });

  it('draw 1–5 residues on real topologies', () => {
    const rng = new Rng(8);
    for (let i = 0; i < 500; i++) {
      const s = randomGlycoside(rng);
      expect(s.sites.length).toBeGreaterThanOrEqual(1);
      expect(s.sites.length).toBeLessThanOrEqual(3);
      expect(new Set(s.sites.map((x) => x.position)).size).toBe(s.sites.length);
    }
  });
});
