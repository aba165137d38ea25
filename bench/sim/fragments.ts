/**
 * What a glycoside's MS2 spectrum contains, from the chemistry: the Y-ion ladder of its topology (each
 * glycosidic or ester bond breaks with its own probability, so a residue is kept only when every bond on
 * its way to the aglycone holds), the precursor, adduct losses, the radical aglycone of deprotonated
 * flavonol 3-O-glycosides, C-glycoside cross-ring ions, aglycone small losses and ring-cleavage ions,
 * sugar oxonium and acylium ions. Intensities are ideal (no noise yet); synth.ts adds the instrument.
 */
import { f, type Formula, isValid, subtract, sum, withCharge } from './chem.js';
import type { Rng } from './prng.js';
import { type GlycosideStructure, type SugarNode, canonicalTopology, residueFormula } from './structure.js';
import {
  ACYLS,
  type AcylName,
  type AglyconeClass,
  ION_TYPES,
  type IonTypeName,
  RESIDUES,
  type RingSubstitution,
} from './tables.js';

/** What produced a simulated peak. */
export type PeakKind =
  | 'precursor'
  | 'adduct-loss'
  | 'Y'
  | 'radical'
  | 'cross-ring'
  | 'water-loss'
  | 'aglycone'
  | 'oxonium'
  | 'acylium'
  | 'decoy'
  | 'isotope'
  | 'noise'
  | 'co-isolated';

/**
 * A peak before the instrument: an ion formula (with charge) and an intensity in arbitrary units; peaks of
 * random decoys have an m/z and charge instead of a formula.
 */
export interface IdealPeak {
  formula?: Formula;
  mz?: number;
  intensity: number;
  label: string;
  kind: PeakKind;
}

/** Ion formula of a precursor: M plus the ion type's adduct. */
export function precursorIon(m: Formula, ionType: IonTypeName): Formula {
  const t = ION_TYPES[ionType];
  if (ionType === '[M]+') {
    if (m.charge !== 1) throw new RangeError('[M]+ needs a cation formula');
    return m;
  }
  if (m.charge !== 0) throw new RangeError(`${ionType} needs a neutral formula`);
  const add = f(
    Object.entries(t.add)
      .filter(([, n]) => (n ?? 0) > 0)
      .map(([el, n]) => `${el}${n}`)
      .join('') || 'H0',
  );
  const remove = f(
    Object.entries(t.add)
      .filter(([, n]) => (n ?? 0) < 0)
      .map(([el, n]) => `${el}${-(n ?? 0)}`)
      .join('') || 'H0',
  );
  return withCharge(subtract(sum(m, add), remove), t.charge);
}

/**
 * The ion a fragment core (aglycone plus kept residues, neutral — or the flavylium cation) forms in the
 * precursor's adduct family: protonated, deprotonated, or keeping Na⁺/K⁺ (metal adducts lose sugars and keep
 * the metal). Doubly charged precursors give singly charged fragments here; synth adds the 2+ ones.
 */
export function fragmentIon(
  core: Formula,
  ionType: IonTypeName,
  charge = ION_TYPES[ionType].charge > 0 ? 1 : -1,
): Formula {
  if (ionType === '[M]+') return core;
  const z = Math.abs(charge);
  switch (ionType) {
    case '[M+Na]+':
      return withCharge(sum(core, f('Na')), 1);
    case '[M+K]+':
      return withCharge(sum(core, f('K')), 1);
    case '[M+H]+':
    case '[M+NH4]+':
    case '[M+2H]2+':
      return withCharge(sum(core, f(`H${z}`)), z);
    default:
      return withCharge(subtract(core, f(`H${z}`)), -z);
  }
}

/** Options of {@link glycosideFragments}. */
export interface FragmentOptions {
  /** Collision energy scale (0.2 soft … 1.2 hard). Drawn when unset. */
  energy?: number;
}

interface BondState {
  kept: SugarNode[];
  keptAcyls: { host: SugarNode; acyl: AcylName }[];
  lostRoots: Set<string>;
  keptCRoots: { site: string; node: SugarNode }[];
  prob: number;
  delta: Formula;
}

/** Ideal peaks of a glycoside's MS2 spectrum for one ion type. */
export function glycosideFragments(
  s: GlycosideStructure,
  ionType: IonTypeName,
  rng: Rng,
  o: FragmentOptions = {},
): IdealPeak[] {
  const t = ION_TYPES[ionType];
  const negative = t.polarity === 'negative';
  const metal = ionType === '[M+Na]+' || ionType === '[M+K]+';
  const energy = o.energy ?? rng.uniform(0.25, 1.1);
  const damp = metal ? 0.3 : ionType === '[M+Cl]-' ? 0.6 : 1;
  const peaks: IdealPeak[] = [];

  // Bond lability (first-order constants; "common practice" ranking, not fitted to any data): aglycone–O-sugar
  // bonds break most easily, interglycosidic ones less (in negative mode disaccharides are often lost whole,
  // e.g. −308 of rutinosides, Shi et al. 2007), esters less, C–C glycosidic bonds hardly at all.
  const pBreak = (k: number): number => 1 - Math.exp(-k * energy * damp * rng.logNormal(0, 0.3));
  const kFor = (n: SugarNode, parent: SugarNode | undefined, position: string): number => {
    if (n.linkage === 'C') return 0.03;
    if (!parent) {
      const base = negative ? 2.2 : 2.6;
      return position === '3' ? base * 1.15 : base;
    }
    const terminal = { Hex: 1, Pen: 1.1, dHex: 1.3, HexA: 0.8 }[n.residue];
    return (negative ? 0.9 : 1.8) * terminal;
  };
  const kAcyl = (acyl: AcylName): number => (negative ? (acyl === 'malonyl' ? 1.2 : 0.7) : 0.35);

  // Enumerate kept/broken configurations of all bonds (≤ 5 sugars + 1 acyl: ≤ 64 states).
  const expand = (
    n: SugarNode,
    parent: SugarNode | undefined,
    position: string,
    isRoot: boolean,
  ): BondState[] => {
    const p = pBreak(kFor(n, parent, position));
    const broken: BondState = {
      kept: [],
      keptAcyls: [],
      lostRoots: new Set(isRoot ? [position] : []),
      keptCRoots: [],
      prob: p,
      delta: f('H0'),
    };
    let kept: BondState[] = [
      {
        kept: [n],
        keptAcyls: [],
        lostRoots: new Set(),
        keptCRoots: isRoot && n.linkage === 'C' ? [{ site: position, node: n }] : [],
        prob: 1 - p,
        delta: f(RESIDUES[n.residue]),
      },
    ];
    for (const acyl of n.acyls) {
      const pa = pBreak(kAcyl(acyl));
      const next: BondState[] = [];
      for (const st of kept) {
        next.push({ ...st, prob: st.prob * pa });
        next.push({
          ...st,
          keptAcyls: [...st.keptAcyls, { host: n, acyl }],
          prob: st.prob * (1 - pa),
          delta: sum(st.delta, f(ACYLS[acyl].formula)),
        });
      }
      kept = next;
    }
    for (const c of n.children) kept = product(kept, expand(c, n, position, false));
    return [broken, ...kept];
  };
  let states: BondState[] = [
    { kept: [], keptAcyls: [], lostRoots: new Set(), keptCRoots: [], prob: 1, delta: f('H0') },
  ];
  for (const site of s.sites) states = product(states, expand(site.root, undefined, site.position, true));

  const total = s.sites.reduce((acc, site) => acc + countSugars(site.root), 0);
  const totalAcyls = s.sites.reduce((acc, site) => acc + countAcyls(site.root), 0);
  const m = sum(s.aglycone.formula, ...s.sites.map((x) => subtreeFormula(x.root)));
  const precursor = precursorIon(m, ionType);
  const flavonol3 =
    negative &&
    s.aglycone.scaffold.class === 'flavonol' &&
    s.sites.some((x) => x.position === '3' && x.root.linkage === 'O');
  const radicalShare = flavonol3 ? radicalShareOf(s.aglycone.scaffold.name, rng) : 0;
  const bigForTwo = Math.abs(t.charge) === 2;
  let y0Ion: Formula | undefined;
  let y0Intensity = 0;

  for (const st of states) {
    const intact = st.kept.length === total && st.keptAcyls.length === totalAcyls;
    let intensity = st.prob * rng.logNormal(0, 0.35);
    if (intact) {
      // The surviving precursor: variable, sometimes nearly gone.
      intensity = rng.chance(0.05) ? 0 : st.prob * rng.logUniform(0.15, 3) + rng.logUniform(0.005, 0.08);
      if (st.keptCRoots.length > 0) {
        // C-glycosides lose hardly any sugar: cross-ring cleavages of the intact ion carry the spectrum
        // (vitexin [M−H]⁻ 431 → 311, 341; REFERENCE.md §4).
        const share = rng.uniform(0.5, 0.92);
        const total = st.prob * rng.logNormal(0, 0.2);
        for (const x of crossRing(st.keptCRoots, negative, metal, rng)) {
          const ion = subtract(bigForTwo ? fragmentIon(m, ionType) : precursor, x.loss);
          if (isValid(ion))
            peaks.push({
              formula: ion,
              intensity: total * share * x.w,
              label: `[M]${x.label}`,
              kind: 'cross-ring',
            });
        }
        intensity = rng.chance(0.03) ? 0 : total * (1 - share) * rng.logUniform(0.3, 2);
      }
      emitPrecursor(peaks, precursor, m, ionType, intensity, rng);
      if (rng.chance(0.3)) {
        peaks.push({
          formula: subtract(bigForTwo ? fragmentIon(m, ionType) : precursor, f('H2O')),
          intensity: intensity * rng.uniform(0.02, 0.15),
          label: '[M−H2O]',
          kind: 'water-loss',
        });
      }
      continue;
    }
    const isY0 = st.kept.length === 0;
    if (!isY0 && rng.chance(0.12)) continue; // not every Y ion every time
    const core = sum(s.aglycone.formula, st.delta);
    const label = isY0 ? 'Y0' : `Y[${keptTopology(s, st)}]`;
    let ionIntensity = intensity;

    // C-glycosidic sugars still attached: cross-ring cleavages and water losses take much of the ion.
    if (st.keptCRoots.length > 0) {
      const xr = crossRing(st.keptCRoots, negative, metal, rng);
      const share = rng.uniform(0.5, 0.9);
      for (const x of xr) {
        const ion = subtract(fragmentIon(core, ionType), x.loss);
        if (isValid(ion))
          peaks.push({
            formula: ion,
            intensity: intensity * share * x.w,
            label: `${label}${x.label}`,
            kind: 'cross-ring',
          });
      }
      ionIntensity *= 1 - share;
    }
    // Radical aglycone of flavonol 3-O-glycosides in negative mode (Hvattum & Ekeberg 2003).
    if (flavonol3 && st.lostRoots.has('3')) {
      const ion = fragmentIon(core, ionType);
      peaks.push({
        formula: subtract(ion, f('H')),
        intensity: ionIntensity * radicalShare,
        label: `${label}−H•`,
        kind: 'radical',
      });
      ionIntensity *= 1 - radicalShare;
    }
    // Malonyl esters decarboxylate (−CO2) in negative mode [from memory].
    if (negative && st.keptAcyls.some((a) => a.acyl === 'malonyl') && rng.chance(0.6)) {
      const ion = subtract(fragmentIon(core, ionType), f('CO2'));
      peaks.push({
        formula: ion,
        intensity: ionIntensity * rng.uniform(0.1, 0.5),
        label: `${label}−CO2`,
        kind: 'Y',
      });
    }
    if (bigForTwo && st.kept.length >= 2 && rng.chance(0.7)) {
      const q = rng.uniform(0.2, 0.7);
      peaks.push({
        formula: fragmentIon(core, ionType, t.charge),
        intensity: ionIntensity * q,
        label: `${label}(2)`,
        kind: 'Y',
      });
      ionIntensity *= 1 - q;
    }
    const ion = fragmentIon(core, ionType);
    peaks.push({ formula: ion, intensity: ionIntensity, label, kind: 'Y' });
    if (isY0) {
      y0Ion = ion;
      y0Intensity = ionIntensity;
    }
  }

  if (y0Ion && y0Intensity > 0) {
    for (const x of aglyconeFragments(s, y0Ion, negative, metal, rng)) {
      peaks.push({ formula: x.formula, intensity: y0Intensity * x.w, label: x.label, kind: 'aglycone' });
    }
  }
  if (!negative) peaks.push(...oxoniumIons(s, ionType, rng, Math.max(...peaks.map((p) => p.intensity))));
  return peaks.filter((p) => p.intensity > 0 && p.formula !== undefined && isValid(p.formula));
}

function emitPrecursor(
  peaks: IdealPeak[],
  precursor: Formula,
  m: Formula,
  ionType: IonTypeName,
  intensity: number,
  rng: Rng,
): void {
  if (intensity <= 0) return;
  // Adducts that shed their neutral first: NH3 from [M+NH4]⁺, HCOOH from [M+HCOO]⁻, HCl from [M+Cl]⁻.
  const shed: Partial<Record<IonTypeName, [string, number, number]>> = {
    '[M+NH4]+': ['NH3', 0.6, 0.95],
    '[M+HCOO]-': ['HCOOH', 0.5, 0.95],
    '[M+Cl]-': ['HCl', 0.1, 0.7],
  };
  const s = shed[ionType];
  if (s) {
    const share = rng.uniform(s[1], s[2]);
    peaks.push({
      formula: precursor,
      intensity: intensity * (1 - share),
      label: 'precursor',
      kind: 'precursor',
    });
    peaks.push({
      formula: fragmentIon(m, ionType),
      intensity: intensity * share,
      label: `[precursor−${s[0]}]`,
      kind: 'adduct-loss',
    });
    return;
  }
  peaks.push({ formula: precursor, intensity, label: 'precursor', kind: 'precursor' });
}

function product(a: BondState[], b: BondState[]): BondState[] {
  const out: BondState[] = [];
  for (const x of a) {
    for (const y of b) {
      out.push({
        kept: [...x.kept, ...y.kept],
        keptAcyls: [...x.keptAcyls, ...y.keptAcyls],
        lostRoots: new Set([...x.lostRoots, ...y.lostRoots]),
        keptCRoots: [...x.keptCRoots, ...y.keptCRoots],
        prob: x.prob * y.prob,
        delta: sum(x.delta, y.delta),
      });
    }
  }
  return out;
}

function countSugars(n: SugarNode): number {
  return 1 + n.children.reduce((a, c) => a + countSugars(c), 0);
}
function countAcyls(n: SugarNode): number {
  return n.acyls.length + n.children.reduce((a, c) => a + countAcyls(c), 0);
}
function subtreeFormula(n: SugarNode): Formula {
  return sum(residueFormula(n), ...n.children.map(subtreeFormula));
}

/** The kept part of the sugar forest, in the simulator's topology notation. */
function keptTopology(s: GlycosideStructure, st: BondState): string {
  const kept = new Set(st.kept);
  const prune = (n: SugarNode): SugarNode => ({
    residue: n.residue,
    linkage: n.linkage,
    acyls: st.keptAcyls.filter((k) => k.host === n).map((k) => k.acyl),
    children: n.children.filter((c) => kept.has(c)).map(prune),
  });
  return canonicalTopology(s.sites.filter((x) => kept.has(x.root)).map((x) => ({ root: prune(x.root) })));
}

/** Share of the radical [Y0−H]⁻• in the Y0 pair: kaempferol < quercetin < myricetin (Hvattum & Ekeberg 2003). */
function radicalShareOf(name: string, rng: Rng): number {
  const base: Record<string, number> = { kaempferol: 0.25, quercetin: 0.5, myricetin: 0.65 };
  const b = base[name] ?? 0.4;
  return Math.min(0.85, Math.max(0.05, b * rng.logNormal(0, 0.25)));
}

/**
 * Cross-ring losses of C-glycosidic sugars. Hexose: 0,2X −C4H8O4 (120) and 0,3X −C3H6O3 (90) in negative
 * mode (PMC5632855), waters and 0,1X −C5H10O5 (150) in positive mode, I(−150)/I(−120) < 1 for 8-C and > 1 for
 * 6-C (Kazuno et al. 2005); 0,4X −C2H4O2 (60) weak. Pentose: the same cleavages one CH2O shorter (0,2X −90,
 * 0,3X −60) [from memory].
 */
function crossRing(
  roots: { site: string; node: SugarNode }[],
  negative: boolean,
  metal: boolean,
  rng: Rng,
): { loss: Formula; w: number; label: string }[] {
  const singles = roots.map((r) => {
    const hex = r.node.residue === 'Hex';
    const six = r.site === '6';
    const list: [string, number, string][] = negative
      ? hex
        ? [
            ['C4H8O4', 1, '0,2X'],
            ['C3H6O3', six ? 0.6 : 0.25, '0,3X'],
            ['H2O', 0.15, '−H2O'],
            ['C4H10O5', 0.08, '0,2X−H2O'],
            ['C2H4O2', 0.05, '0,4X'],
          ]
        : [
            ['C3H6O3', 1, '0,2X'],
            ['C2H4O2', 0.4, '0,3X'],
            ['H2O', 0.15, '−H2O'],
          ]
      : hex
        ? [
            ['H2O', metal ? 0.3 : 0.8, '−H2O'],
            ['H4O2', metal ? 0.1 : 0.4, '−2H2O'],
            ['H6O3', metal ? 0.03 : 0.15, '−3H2O'],
            ['C4H8O4', 0.7, '0,2X'],
            ['C5H10O5', six ? 0.9 : 0.3, '0,1X'],
            ['C3H6O3', 0.15, '0,3X'],
            ['C4H10O5', 0.3, '0,2X−H2O'],
          ]
        : [
            ['H2O', 0.7, '−H2O'],
            ['H4O2', 0.3, '−2H2O'],
            ['C3H6O3', 0.6, '0,2X'],
            ['C4H8O4', 0.4, '0,1X'],
            ['C2H4O2', 0.15, '0,3X'],
          ];
    return list.map(([loss, w, label]) => ({
      loss: f(loss),
      w: w * rng.logNormal(0, 0.3),
      label: `${label}(${r.site})`,
    }));
  });
  let out = singles.flat();
  if (singles.length === 2) {
    // Both C-sugars cleaved (e.g. −2×120 of 6,8-di-C-hexosides).
    for (const a of singles[0]!.slice(0, 2)) {
      for (const b of singles[1]!.slice(0, 2)) {
        out.push({ loss: sum(a.loss, b.loss), w: a.w * b.w * 0.4, label: `${a.label}${b.label}` });
      }
    }
  }
  const tot = out.reduce((acc, x) => acc + x.w, 0);
  out = out.map((x) => ({ ...x, w: x.w / tot }));
  return out;
}

/** Small losses of the aglycone ion by class [trade; Fabre et al. 2001 for CO, CO2, C3O2 in negative mode]. */
const AGLYCONE_LOSSES: Record<AglyconeClass, { pos: string[]; neg: string[] }> = {
  anthocyanidin: { pos: ['H2O', 'CO', 'CH2O2', 'C2O2'], neg: [] },
  flavonol: { pos: ['H2O', 'CO', 'CH2O2', 'C2O2'], neg: ['CO', 'CO2', 'C3O2', 'CH2O'] },
  flavone: { pos: ['H2O', 'CO', 'C2H2O', 'CH2O2'], neg: ['CO', 'CO2', 'C3O2'] },
  flavanone: { pos: ['H2O', 'CH2O2'], neg: ['CO2', 'C2H2O'] },
  isoflavone: { pos: ['H2O', 'CO', 'C2O2', 'CH2O2'], neg: ['CO', 'CO2', 'C3O2'] },
  dihydrochalcone: { pos: ['H2O'], neg: ['H2O', 'C2H2O'] },
  'flavan-3-ol': { pos: ['H2O'], neg: ['CO2', 'C4H4O2'] },
  stilbene: { pos: ['H2O', 'C2H2O', 'C6H6O'], neg: ['C2H2O', 'C4H4O2'] },
  'hydroxycinnamic acid': { pos: ['H2O', 'CH2O2'], neg: ['CO2'] },
  'hydroxybenzoic acid': { pos: ['H2O', 'CH2O2'], neg: ['CO2', 'H2O'] },
  coumarin: { pos: ['CO', 'C2O2', 'CH2O2'], neg: ['CO2', 'CO'] },
  anthraquinone: { pos: ['H2O', 'CO', 'C2O2'], neg: ['CO', 'CO2', 'C2O3'] },
  'simple phenol': { pos: ['H2O'], neg: [] },
};

/**
 * Ring-cleavage (retro-Diels–Alder type) ions of flavonoid aglycones, from the substitution of the A and B
 * rings [calc from the structures; check values from memory: 1,3A⁺ 153.0182 and 1,3A⁻ 151.0037 of
 * 5,7-dihydroxy flavonoids, 1,3B⁺ 119.0491 of apigenin, 0,2B⁺ 137.0233 of quercetin].
 */
export function ringIons(
  cls: AglyconeClass,
  rings: RingSubstitution,
  negative: boolean,
): { formula: Formula; ring: 'A' | 'B'; label: string }[] {
  const { aOH, aOMe, bOH, bOMe } = rings;
  const aH = 4 - aOH - aOMe;
  const bH = 5 - bOH - bOMe;
  const ion = (c: number, h: number, o: number, z: number): Formula => withCharge(f(`C${c}H${h}O${o}`), z);
  const out: { formula: Formula; ring: 'A' | 'B'; label: string }[] = [];
  const a13 = negative
    ? ion(7 + aOMe, -1 + aH + aOH + 3 * aOMe, 2 + aOH + aOMe, -1)
    : ion(7 + aOMe, 1 + aH + aOH + 3 * aOMe, 2 + aOH + aOMe, 1);
  switch (cls) {
    case 'flavone':
      out.push({ formula: a13, ring: 'A', label: '1,3A' });
      out.push({
        formula: negative
          ? ion(8 + bOMe, bH + bOH + 3 * bOMe, bOH + bOMe, -1)
          : ion(8 + bOMe, 2 + bH + bOH + 3 * bOMe, bOH + bOMe, 1),
        ring: 'B',
        label: '1,3B',
      });
      break;
    case 'flavonol':
      out.push({ formula: a13, ring: 'A', label: '1,3A' });
      if (negative) out.push({ formula: sum(a13, f('CO')), ring: 'A', label: '1,2A' });
      else
        out.push({
          formula: ion(7 + bOMe, bH + bOH + 3 * bOMe, 1 + bOH + bOMe, 1),
          ring: 'B',
          label: '0,2B',
        });
      break;
    case 'anthocyanidin':
      out.push({ formula: ion(7 + bOMe, bH + bOH + 3 * bOMe, 1 + bOH + bOMe, 1), ring: 'B', label: '0,2B' });
      break;
    case 'flavanone':
      out.push({ formula: a13, ring: 'A', label: '1,3A' });
      out.push({
        formula: negative
          ? ion(8 + bOMe, 2 + bH + bOH + 3 * bOMe, bOH + bOMe, -1)
          : ion(9 + bOMe, 2 + bH + bOH + 3 * bOMe, 1 + bOH + bOMe, 1),
        ring: 'B',
        label: negative ? '1,3B' : '1,4B',
      });
      break;
    case 'isoflavone':
      out.push({ formula: a13, ring: 'A', label: '1,3A' });
      break;
    default:
      break;
  }
  return out.filter((x) => isValid(x.formula));
}

/** Fixed low-m/z ions of non-flavonoid-skeleton classes [from memory; phloretin, catechin]. */
const FIXED_IONS: Partial<Record<AglyconeClass, { pos: [string, 'A' | 'B'][]; neg: [string, 'A' | 'B'][] }>> =
  {
    dihydrochalcone: {
      pos: [
        ['C8H9O4+', 'A'],
        ['C7H7O+', 'B'],
      ],
      neg: [
        ['C8H7O4-', 'A'],
        ['C8H7O-', 'B'],
      ],
    },
    'flavan-3-ol': {
      pos: [
        ['C7H7O3+', 'A'],
        ['C7H7O2+', 'B'],
        ['C9H9O3+', 'B'],
      ],
      neg: [
        ['C6H5O3-', 'A'],
        ['C9H7O4-', 'B'],
      ],
    },
  };

/** Small losses and ring ions of the aglycone ion `y0`, with weights summing to a drawn share of Y0. */
export function aglyconeFragments(
  s: GlycosideStructure,
  y0: Formula,
  negative: boolean,
  metal: boolean,
  rng: Rng,
): { formula: Formula; w: number; label: string }[] {
  const ag = s.aglycone;
  const cls = ag.scaffold.class;
  const share = rng.uniform(0.05, 0.5);
  const list: { formula: Formula; w: number; label: string }[] = [];
  const losses = metal ? ['H2O', 'CO'] : negative ? AGLYCONE_LOSSES[cls].neg : AGLYCONE_LOSSES[cls].pos;
  for (const l of losses)
    if (rng.chance(0.7))
      list.push({ formula: subtract(y0, f(l)), w: rng.logUniform(0.05, 1), label: `Y0−${l}` });
  const methoxy = ag.scaffold.methoxy + (ag.modification?.includes('methoxy') ? 1 : 0);
  if (methoxy > 0 && !metal) {
    // CH3• loss of methoxylated aglycones (wogonin 283 → 268, PMC4885406), strong in negative mode.
    list.push({
      formula: subtract(y0, f('CH3')),
      w: rng.logUniform(negative ? 0.5 : 0.1, negative ? 3 : 1),
      label: 'Y0−CH3•',
    });
  }
  if (!metal) {
    const rings = ag.scaffold.rings ? ringIons(cls, ag.scaffold.rings, negative) : [];
    const fixed = (FIXED_IONS[cls]?.[negative ? 'neg' : 'pos'] ?? []).map(([x, ring]) => ({
      formula: f(x),
      ring,
      label: 'ring',
    }));
    for (const x of [...rings, ...fixed]) {
      if (!rng.chance(0.65)) continue;
      let formula = x.formula;
      if (ag.shift && ag.shift.ring === x.ring) formula = sum(formula, ag.shift.delta);
      if (isValid(formula)) list.push({ formula, w: rng.logUniform(0.05, 1), label: x.label });
    }
  }
  const tot = list.reduce((acc, x) => acc + x.w, 0);
  return tot > 0 ? list.filter((x) => isValid(x.formula)).map((x) => ({ ...x, w: (x.w / tot) * share })) : [];
}

/** Sugar oxonium (B) ions, acylated-sugar and acylium ions in positive mode (REFERENCE.md §4) — sometimes. */
function oxoniumIons(s: GlycosideStructure, ionType: IonTypeName, rng: Rng, base: number): IdealPeak[] {
  const out: IdealPeak[] = [];
  const metal = ionType === '[M+Na]+' || ionType === '[M+K]+';
  const cation = metal ? f(ionType === '[M+Na]+' ? 'Na' : 'K') : f('H');
  const charged = (x: Formula): Formula => withCharge(sum(x, cation), 1);
  if (metal) {
    // Sodiated (potassiated) sugar ions, e.g. [Hex+Na]⁺ 185.04 [from memory].
    if (rng.chance(0.3)) {
      const term = terminals(s)[0];
      if (term)
        out.push({
          formula: charged(f(RESIDUES[term.residue])),
          intensity: base * rng.uniform(0.02, 0.1),
          label: `B(${term.residue}+M)`,
          kind: 'oxonium',
        });
    }
    return out;
  }
  if (rng.chance(0.45)) {
    for (const t of terminals(s)) {
      if (t.linkage === 'C' || !rng.chance(0.6)) continue;
      const b = charged(residueFormula(t));
      out.push({
        formula: b,
        intensity: base * rng.logUniform(0.01, 0.15),
        label: `B(${t.residue})`,
        kind: 'oxonium',
      });
      if (rng.chance(0.3))
        out.push({
          formula: subtract(b, f('H2O')),
          intensity: base * rng.logUniform(0.005, 0.06),
          label: `B(${t.residue})−H2O`,
          kind: 'oxonium',
        });
    }
    // Disaccharide oxonium of an outer two-sugar chain (e.g. rutinose 309.12).
    for (const site of s.sites) {
      const r = site.root;
      if (
        r.children.length === 1 &&
        r.children[0]!.children.length === 0 &&
        r.linkage === 'O' &&
        rng.chance(0.3)
      ) {
        out.push({
          formula: charged(sum(residueFormula(r), residueFormula(r.children[0]!))),
          intensity: base * rng.logUniform(0.01, 0.08),
          label: 'B2',
          kind: 'oxonium',
        });
      }
    }
  }
  for (const site of s.sites) {
    const stack: SugarNode[] = [site.root];
    while (stack.length > 0) {
      const n = stack.pop()!;
      stack.push(...n.children);
      for (const ac of n.acyls) {
        if (ACYLS[ac].aromatic && rng.chance(0.6)) {
          // Acylium RCO⁺ (coumaroyl 147.04406, REFERENCE.md §4).
          out.push({
            formula: charged(f(ACYLS[ac].formula)),
            intensity: base * rng.logUniform(0.02, 0.2),
            label: `acylium(${ac})`,
            kind: 'acylium',
          });
        }
      }
    }
  }
  return out;
}

function terminals(s: GlycosideStructure): SugarNode[] {
  const out: SugarNode[] = [];
  const visit = (n: SugarNode): void => {
    if (n.children.length === 0) out.push(n);
    n.children.forEach(visit);
  };
  for (const x of s.sites) visit(x.root);
  return out;
}
