import { ELECTRON_MASS } from '../chem/elements.js';
import { createFormulaFilter } from '../chem/filters.js';
import type { IonType } from '../chem/ions.js';
import { type Counts, countsMass, formulaKey, NE } from '../graph/counts.js';
import type { AglyconeGroup, Composition, CompiledRuleSet } from '../rules/compile.js';
import { type CleanSpectrum, tolDa } from '../spectrum/clean.js';

/** What the aglycone of an interpretation is: a library group, or an unknown formula (open world). */
export type AglyconeChoice =
  | { readonly kind: 'library'; readonly group: AglyconeGroup }
  | { readonly kind: 'unknown'; readonly counts: Counts };

/** One reading of the precursor: an aglycone plus a glycan composition under one ion type. */
export interface Interpretation {
  /** Ion type of this reading (a hypothesis may hold several: cyanidin [M]+ and kaempferol [M+H]+). */
  readonly ion: IonType;
  readonly aglycone: AglyconeChoice;
  readonly composition: Composition;
  /** Index of the composition in the compiled rule set's list (identity for grouping). */
  readonly compositionIndex: number;
}

/** A precursor ion formula with every interpretation that gives it. */
export interface PrecursorHypothesis {
  /** Ion type of the first interpretation (every interpretation gives the same ion formula). */
  readonly ion: IonType;
  /** Atoms of the precursor ion. */
  readonly counts: Counts;
  readonly charge: number;
  readonly key: number;
  /** Theoretical m/z and the error of the measured one. */
  readonly mz: number;
  readonly ppm: number;
  readonly interpretations: Interpretation[];
}

/** Tolerances and limits of {@link interpretPrecursor}. */
export interface PrecursorOptions {
  precursorPpm: number;
  fragmentPpm: number;
  floorDa: number;
  /** Peaks at least this fraction of the base peak are tried as the Y0 of an unknown aglycone. */
  unknownY0MinRelative: number;
}

/**
 * The atoms delta of fragment ions relative to the neutral fragment, for an ion type: the adduct's atoms
 * less the neutral it loses first (formate: +HCOO − HCOOH = −H), or +H/−H for multiply charged ions whose
 * fragments are singly charged.
 */
export function fragmentDelta(
  ion: IonType,
  rules: CompiledRuleSet,
): { readonly counts: Counts; readonly charge: number } {
  let byIon = fragmentDeltas.get(rules);
  if (!byIon) {
    byIon = new Map();
    fragmentDeltas.set(rules, byIon);
  }
  let d = byIon.get(ion);
  if (!d) {
    d = computeFragmentDelta(ion, rules);
    if (byIon.size > 256) byIon.clear(); // ion types are the rule set's own objects; bounded all the same
    byIon.set(ion, d);
  }
  return d;
}

/** {@link fragmentDelta} per rule set and ion type (shared: callers only read them). */
const fragmentDeltas = new WeakMap<CompiledRuleSet, Map<IonType, { counts: Counts; charge: number }>>();

function computeFragmentDelta(ion: IonType, rules: CompiledRuleSet): { counts: Counts; charge: number } {
  const counts = Int32Array.from(ion.delta.counts);
  const adduct = rules.adductLosses.get(ion.name);
  if (adduct) for (let e = 0; e < NE; e++) counts[e]! -= adduct.counts[e]!;
  if (Math.abs(ion.charge) > 1) {
    // [M+2H]2+ → [F+H]+; [M-2H]2- → [F-H]-.
    const sign = Math.sign(ion.charge);
    counts.fill(0);
    counts[1] = sign;
    return { counts, charge: sign };
  }
  return { counts, charge: ion.charge };
}

const H_MASS = 1.00782503223;
const WATER = 2 * 1.00782503223 + 15.99491461957;

/** Index of the (first) peak within tolerance of an m/z, not the precursor; -1 when none. */
function peakAt(s: CleanSpectrum, mz: number, o: PrecursorOptions): number {
  const tol = tolDa(mz, o.fragmentPpm, o.floorDa);
  let lo = 0;
  let hi = s.mz.length;
  while (lo < hi) {
    const m = (lo + hi) >> 1;
    if (s.mz[m]! < mz - tol) lo = m + 1;
    else hi = m;
  }
  return lo < s.mz.length && s.mz[lo]! <= mz + tol && lo !== s.precursorIndex ? lo : -1;
}

function hasPeak(s: CleanSpectrum, mz: number, o: PrecursorOptions): boolean {
  return peakAt(s, mz, o) >= 0;
}

/** For each whole dalton d up to the heaviest mass, the index of the first mass ≥ d (masses ascending). */
export function massBins(masses: Float64Array): Int32Array {
  const top = masses.length ? Math.ceil(masses[masses.length - 1]!) + 1 : 1;
  const bins = new Int32Array(top + 1);
  let i = 0;
  for (let d = 0; d <= top; d++) {
    while (i < masses.length && masses[i]! < d) i++;
    bins[d] = i;
  }
  return bins;
}

/** The index range of the (ascending) masses within [lo, hi], found from the whole-dalton bins. */
function compositionRange(masses: Float64Array, bins: Int32Array, lo: number, hi: number): [number, number] {
  const d = Math.floor(lo);
  if (d >= bins.length) return [masses.length, masses.length];
  let a = d < 0 ? 0 : bins[d]!;
  while (a < masses.length && masses[a]! < lo) a++;
  let end = a;
  while (end < masses.length && masses[end]! <= hi) end++;
  return [a, end];
}

/** What {@link interpretPrecursor} derives from the rule set alone. */
interface PrecursorTables {
  readonly aglFilter: ReturnType<typeof createFormulaFilter>;
  readonly residueMasses: readonly number[];
  readonly aglyconeKeys: ReadonlySet<number>;
  /** Cross-ring losses (indices) of residues that may be C-linked. */
  readonly crossOnC: readonly number[];
  /** The residues (unit indices) with such a cross-ring loss, each once. */
  readonly cResidues: readonly number[];
  /** Per composition (by index), 1 when it holds a residue with a cross-ring loss that may be C-linked. */
  readonly hasCLinkable: Uint8Array;
  /** Every composition's unit counts in one flat array (`[index * units + u]`), read without pointer chasing. */
  readonly compositionUnits: Uint8Array;
  /** First composition (by mass) of each whole-dalton bin: compositions from `massIndex[⌊m⌋]` have mass ≥ ⌊m⌋. */
  readonly massIndex: Int32Array;
}

const precursorTableCache = new WeakMap<CompiledRuleSet, PrecursorTables>();

function precursorTables(rules: CompiledRuleSet): PrecursorTables {
  let t = precursorTableCache.get(rules);
  if (!t) {
    t = {
      aglFilter: createFormulaFilter({
        rdbe: { electrons: 'even', min: rules.rules.limits.unknownAglyconeMinRdbe },
        ratios: 'extended',
      }),
      residueMasses: rules.units.filter((u) => u.kind === 'residue').map((u) => u.mass),
      aglyconeKeys: new Set(rules.aglyconeGroups.map((g) => formulaKey(g.counts, g.cation ? 1 : 0))),
      crossOnC: rules.crossRingResidue.flatMap((r, x) => (rules.cLinkable[r] === 1 ? [x] : [])),
      cResidues: [...new Set(rules.crossRingResidue.filter((r) => rules.cLinkable[r] === 1))],
      massIndex: massBins(rules.compositionMasses),
      compositionUnits: Uint8Array.from(rules.compositions.flatMap((c) => Array.from(c.units))),
      hasCLinkable: Uint8Array.from(rules.compositions, (c) =>
        rules.crossRingResidue.some((r) => c.units[r]! > 0 && rules.cLinkable[r] === 1) ? 1 : 0,
      ),
    };
    precursorTableCache.set(rules, t);
  }
  return t;
}

const NO_DELTA = { counts: new Int32Array(NE), charge: 1 } as const;

/** What a spectrum shows of one aglycone under one ion type (see `interpretPrecursor`). */
interface AglyconeEvidence {
  /** Atom mass of the Y0 ion, the electrons' mass of its charge, and |charge|. */
  readonly y0: number;
  readonly shift: number;
  readonly az: number;
  /** Its Y0 or radical Y0 ion is in the spectrum. */
  readonly y0Seen: boolean;
}

/**
 * Every precursor ion formula that an aglycone (library, or unknown with a Y0 peak in the spectrum) plus a
 * glycan composition of the rule set explains within the precursor tolerance, grouped by formula.
 */
export function interpretPrecursor(
  precursorMz: number,
  charge: number | undefined,
  polarity: 'positive' | 'negative',
  spectrum: CleanSpectrum,
  rules: CompiledRuleSet,
  options: PrecursorOptions,
): PrecursorHypothesis[] {
  const byKey = new Map<number, PrecursorHypothesis>();
  const ions = rules.ionTypes[polarity].filter((t) =>
    charge === undefined ? Math.abs(t.charge) === 1 : Math.abs(t.charge) === Math.abs(charge),
  );
  const masses = rules.compositionMasses;
  const {
    aglFilter,
    residueMasses,
    aglyconeKeys,
    crossOnC,
    cResidues,
    hasCLinkable,
    compositionUnits,
    massIndex,
  } = precursorTables(rules);
  const nUnits = rules.units.length;

  // A cross-ring ion of a C-glycosidic core of atom mass `core` (or its water loss) is in the spectrum.
  const crossAt = (core: number, x: number, shift: number, az: number): boolean => {
    const ion = core - rules.crossRingMasses[x]!;
    return (
      hasPeak(spectrum, (ion - shift) / az, options) || hasPeak(spectrum, (ion - WATER - shift) / az, options)
    );
  };
  const nCross = crossOnC.length;
  const nC = cResidues.length;
  // The cross-ring ions of the latest aglycone's C-glycosidic cores, looked up once and then shared by every
  // composition tried with that aglycone: per cleavage k (index into crossOnC), seen (1), not (0) or not looked
  // up yet (-1) on the mono-C core at [k], on the di-C core of C-linkable residues a ≤ b at
  // [nCross + (a · nC + b) · nCross + k]. Each aglycone's compositions are tried before the next aglycone's.
  const memo = new Int8Array(nCross + nC * nC * nCross);
  // What the spectrum shows of one aglycone under one ion type: its Y0 (or radical Y0) ion (and a fresh memo of
  // its cross-ring ions).
  const evidenceOf = (ion: IonType, aglCounts: Counts, cation: boolean): AglyconeEvidence => {
    const frag = cation ? NO_DELTA : fragmentDelta(ion, rules);
    const z = frag.charge;
    const az = Math.abs(z);
    const shift = z * ELECTRON_MASS;
    const y0 = countsMass(aglCounts) + countsMass(frag.counts);
    const y0Seen =
      hasPeak(spectrum, (y0 - shift) / az, options) ||
      (polarity === 'negative' && hasPeak(spectrum, (y0 - H_MASS - shift) / az, options));
    if (!y0Seen) memo.fill(-1);
    return { y0, shift, az, y0Seen };
  };
  // Cross-ring cleavage k of a core of atom mass `core`, memoised in `memo[slot]`.
  const crossMemo = (ev: AglyconeEvidence, slot: number, core: number, k: number): boolean => {
    let hit = memo[slot]!;
    if (hit < 0) {
      hit = crossAt(core, crossOnC[k]!, ev.shift, ev.az) ? 1 : 0;
      memo[slot] = hit;
    }
    return hit === 1;
  };
  // Whether the interpretation's aglycone is evidenced: its Y0 (or radical Y0) ion, or cross-ring ions of its
  // C-glycosidic core. Readings without either could never be annotated, so they are not pursued.
  const keyIon = (ev: AglyconeEvidence, compIndex: number): boolean => {
    if (ev.y0Seen) return true;
    // Cross-ring losses of the C-linkable residues the composition holds (a flat table: no pointer chase).
    if (!hasCLinkable[compIndex]) return false;
    const { y0, shift, az } = ev;
    // A C-glycoside shows several cross-ring cleavages of its C-linked sugar (losses of 90 and 120 from a
    // C-hexoside, PMC5632855; 120 and 150, Kazuno 2005); one peak at one such loss is often a coincidence in a
    // busy spectrum, so two different cleavages are asked for (or every one the rule set defines, if fewer).
    // On the aglycone with one C-linked residue (a mono-C-glycoside after its O-linked units are gone) ...
    let monoCross = 0;
    let monoDefined = 0;
    for (let k = 0; k < nCross; k++) {
      const r = rules.crossRingResidue[crossOnC[k]!]!;
      if (compositionUnits[compIndex * nUnits + r]! < 1) continue;
      monoDefined++;
      if (crossMemo(ev, k, y0 + rules.units[r]!.mass, k)) monoCross++;
      if (monoCross >= 2) return true;
    }
    if (monoCross >= 1 && monoDefined === 1) return true;
    // One such ion of the aglycone's core also does when the whole molecule shows two cleavages (they mark a
    // C-glycoside; the core ion ties it to this aglycone).
    if (monoCross >= 1) {
      let whole = 0;
      for (let k = 0; k < nCross; k++) {
        const x = crossOnC[k]!;
        if (compositionUnits[compIndex * nUnits + rules.crossRingResidue[x]!]! < 1) continue;
        if (crossAt(y0 + masses[compIndex]!, x, shift, az) && ++whole >= 2) return true;
      }
    }
    // ... or on the aglycone with two C-linked residues (a di-C-glycoside's core, its cross-ring ions starting
    // from the core: the whole molecule when the composition is just those two). The ions of the whole molecule
    // alone would not do when it holds more: they fit every aglycone + composition split of the precursor.
    for (let a = 0; a < nC; a++) {
      const ra = cResidues[a]!;
      if (compositionUnits[compIndex * nUnits + ra]! < 1) continue;
      for (let b = a; b < nC; b++) {
        const rb = cResidues[b]!;
        if (compositionUnits[compIndex * nUnits + rb]! < (b === a ? 2 : 1)) continue;
        const core = y0 + rules.units[ra]!.mass + rules.units[rb]!.mass;
        let seen = 0;
        for (let k = 0; k < nCross; k++) {
          const r = rules.crossRingResidue[crossOnC[k]!]!;
          if (
            (r === ra || r === rb) &&
            crossMemo(ev, nCross + (a * nC + b) * nCross + k, core, k) &&
            ++seen >= 2
          )
            return true;
        }
      }
    }
    return false;
  };

  const add = (
    ion: IonType,
    agl: AglyconeChoice,
    compIndex: number,
    aglCounts: Counts,
    evidence: AglyconeEvidence,
  ) => {
    if (!keyIon(evidence, compIndex)) return;
    const comp = rules.compositions[compIndex]!;
    const counts = new Int32Array(NE);
    for (let e = 0; e < NE; e++)
      counts[e] = (aglCounts[e]! + comp.counts[e]!) * ion.multiplier + ion.delta.counts[e]!;
    for (let e = 0; e < NE; e++) if (counts[e]! < 0) return;
    const key = formulaKey(counts, ion.charge);
    let h = byKey.get(key);
    if (!h) {
      const mz = (countsMass(counts) - ion.charge * ELECTRON_MASS) / Math.abs(ion.charge);
      // The smaller error of the reported precursor m/z and the precursor peak of the MS2 spectrum.
      let ppm = ((precursorMz - mz) / mz) * 1e6;
      if (spectrum.precursorIndex >= 0) {
        const alt = ((spectrum.mz[spectrum.precursorIndex]! - mz) / mz) * 1e6;
        if (Math.abs(alt) < Math.abs(ppm)) ppm = alt;
      }
      h = { ion, counts, charge: ion.charge, key, mz, ppm, interpretations: [] };
      byKey.set(key, h);
    }
    h.interpretations.push({ ion, aglycone: agl, composition: comp, compositionIndex: compIndex });
  };

  // The window spans the reported precursor m/z and the MS2 precursor peak (their errors differ).
  const window = (ion: IonType) => {
    const z = ion.charge;
    const peakMz = spectrum.precursorIndex >= 0 ? spectrum.mz[spectrum.precursorIndex]! : precursorMz;
    const spread = (Math.abs(peakMz - precursorMz) * Math.abs(z)) / 2;
    const atoms = ((precursorMz + peakMz) / 2) * Math.abs(z) + z * ELECTRON_MASS;
    return { tol: tolDa(atoms, options.precursorPpm, 0) + spread, mNeutral: atoms - ion.deltaMass };
  };
  // Library aglycones first: M = aglycone + composition.
  for (const ion of ions) {
    if (ion.multiplier !== 1) continue;
    const { tol, mNeutral } = window(ion);
    const flavylium = ion.name === '[M]+';
    for (const g of rules.aglyconeGroups) {
      if (g.cation !== flavylium) continue;
      const [a, b] = compositionRange(masses, massIndex, mNeutral - g.mass - tol, mNeutral - g.mass + tol);
      if (a >= b) continue;
      const evidence = evidenceOf(ion, g.counts, g.cation);
      const agl: AglyconeChoice = { kind: 'library', group: g };
      for (let k = a; k < b; k++) add(ion, agl, k, g.counts, evidence);
    }
  }
  for (const ion of ions) {
    if (ion.multiplier !== 1 || ion.name === '[M]+') continue;
    const { tol, mNeutral } = window(ion);
    // Unknown aglycones: an intense fragment is the Y0; the precursor minus it is a composition; the
    // aglycone's formula is the decomposition of the precursor minus the composition (precursor tolerance).
    const frag = fragmentDelta(ion, rules);
    const fragDeltaMass = countsMass(frag.counts);
    let base = 0;
    for (let i = 0; i < spectrum.intensity.length; i++) base = Math.max(base, spectrum.intensity[i]!);
    const seen = new Set<number>();
    for (let i = 0; i < spectrum.mz.length; i++) {
      if (spectrum.intensity[i]! < options.unknownY0MinRelative * base || i === spectrum.precursorIndex)
        continue;
      const fz = frag.charge;
      const fragAtoms = spectrum.mz[i]! * Math.abs(fz) + fz * ELECTRON_MASS;
      for (const radical of polarity === 'negative' ? [0, 1] : [0]) {
        // A radical [Y0−H]−• is one H lighter than Y0.
        const aglMass = fragAtoms - fragDeltaMass + radical * H_MASS;
        const ftol = tolDa(spectrum.mz[i]!, options.fragmentPpm, options.floorDa) + tol;
        const [a, b] = compositionRange(
          masses,
          massIndex,
          mNeutral - aglMass - ftol,
          mNeutral - aglMass + ftol,
        );
        for (let k = a; k < b; k++) {
          if (seen.has(k)) continue;
          seen.add(k);
          const target = mNeutral - masses[k]!;
          if (target <= 0) continue; // a "Y0" at the bottom of the mass scale leaves no aglycone
          // An "aglycone" that still loses a residue in the spectrum is a Y ion, not the aglycone (a test of
          // its mass, so made before any formula is sought).
          const y0Atoms = target + fragDeltaMass;
          if (
            residueMasses.some((m) =>
              hasPeak(spectrum, (y0Atoms - m - fz * ELECTRON_MASS) / Math.abs(fz), options),
            )
          )
            continue;
          rules.aglyconeDecomposer.forEach(
            target,
            { ppm: 0, floorDa: tol },
            (c) => {
              if (!aglFilter(c, 0)) return;
              const key = formulaKey(c, 0);
              if (aglyconeKeys.has(key)) return; // a library aglycone: already interpreted above
              add(ion, { kind: 'unknown', counts: Int32Array.from(c) }, k, c, evidenceOf(ion, c, false));
            },
            { charge: 0 },
          );
        }
      }
    }
  }
  return [...byKey.values()];
}
