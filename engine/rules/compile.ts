import { createDecomposer, type Decomposer } from '../chem/decompose.js';
import type { ElementRanges } from '../chem/element-ranges.js';
import { parseFormula } from '../chem/formula.js';
import { type IonType, resolveIonType } from '../chem/ions.js';
import { type Counts, countsMass, countsOf, NE } from '../graph/counts.js';
import type { RuleSet } from './schema.js';

/** A residue or acyl group: one unit of a glycan composition. */
export interface Unit {
  readonly kind: 'residue' | 'acyl';
  readonly name: string;
  readonly counts: Counts;
  readonly mass: number;
  readonly maxCount: number;
  /** Residues: possible linkages to the aglycone. */
  readonly linkages: readonly ('O' | 'C')[];
  /** Residues: oxonium (B) ion expected in positive mode; acyls: acylium ion expected. */
  readonly cation: boolean;
}

/** A multiset of units (counts per unit index) with its atoms and mass. */
export interface Composition {
  readonly units: Uint8Array;
  readonly counts: Counts;
  readonly mass: number;
  readonly residues: number;
  readonly acyls: number;
}

/** A combination of small neutral losses (H2O, CO, …) and at most one cross-ring loss. */
export interface LossCombo {
  /** Counts per small-loss rule index. */
  readonly repeats: Uint8Array;
  /** Index of the cross-ring rule used, or -1. */
  readonly crossRing: number;
  /** Index of a second cross-ring rule (both sugars of a di-C-glycoside cleaved), or -1. */
  readonly crossRing2: number;
  readonly counts: Counts;
  readonly mass: number;
  /** Number of single losses combined (a cross-ring loss counts as one). */
  readonly size: number;
  /** Whether it removes a radical (turns the ion odd-electron). */
  readonly radical: boolean;
  /** Human name, e.g. `H2O`, `2H2O+CO`, `0,2X`. */
  readonly name: string;
  /** Polarities it applies to. */
  readonly positive: boolean;
  readonly negative: boolean;
}

/** A library aglycone ready for mass arithmetic. */
export interface CompiledAglycone {
  readonly name: string;
  readonly class: string;
  readonly source: string;
  /** Atoms of the neutral molecule, or of the permanent cation when `cation` is true. */
  readonly counts: Counts;
  readonly mass: number;
  readonly cation: boolean;
}

/** Aglycones with identical atoms: the data cannot tell them apart. */
export interface AglyconeGroup {
  readonly members: readonly CompiledAglycone[];
  readonly counts: Counts;
  readonly mass: number;
  readonly cation: boolean;
}

/** A rule set prepared for scoring: every table the hot path needs, built once. */
export interface CompiledRuleSet {
  readonly rules: RuleSet;
  readonly units: readonly Unit[];
  /** 1 for each unit that is a residue, 0 for an acyl group (the hot paths' view of `units[u].kind`). */
  readonly isResidue: Uint8Array;
  /** 1 for each unit that may be C-linked (a residue with linkage C), 0 otherwise. */
  readonly cLinkable: Uint8Array;
  /** Prior score per occurrence of each unit. */
  readonly unitPriors: readonly number[];
  readonly residueCount: number;
  /** Glycan compositions with at least one residue, ascending by mass. */
  readonly compositions: readonly Composition[];
  readonly compositionMasses: Float64Array;
  readonly aglyconeGroups: readonly AglyconeGroup[];
  readonly ionTypes: { readonly positive: readonly IonType[]; readonly negative: readonly IonType[] };
  readonly smallLossNames: readonly string[];
  readonly crossRingNames: readonly string[];
  /** Residue index each cross-ring rule cleaves. */
  readonly crossRingResidue: readonly number[];
  /** Mass of each cross-ring loss. */
  readonly crossRingMasses: readonly number[];
  /** Per residue index, the cross-ring rules whose ions are diagnostic when it is C-linked. */
  readonly diagnosticCrossRing: ReadonlyMap<number, readonly number[]>;
  /** Loss combinations, the empty one first. */
  readonly lossCombos: readonly LossCombo[];
  /** Loss-combination indices per polarity: plain (≤ 1 loss), multi (≥ 2 small losses), cross-ring. */
  readonly comboGroups: Readonly<
    Record<'positive' | 'negative', { plain: number[]; multi: number[]; cross: number[] }>
  >;
  /** `comboNested[a * n + b]`: combination a is contained in combination b. */
  readonly comboNested: Uint8Array;
  /** Neutral that each adduct ion type loses first (HCOOH from [M+HCOO]−), by ion type name. */
  readonly adductLosses: ReadonlyMap<string, { counts: Counts; mass: number; name: string }>;
  /** Decomposer over the aglycone element ranges (unknown aglycones). */
  readonly aglyconeDecomposer: Decomposer;
  /** Decomposer over the precursor element ranges (peaks no rule explains, as sub-formulas). */
  readonly precursorDecomposer: Decomposer;
  readonly aglyconeRanges: ElementRanges;
}

/** Codes of rule sets that validate but cannot be compiled. */
export type CompileErrorCode = 'compile-formula' | 'compile-ion-type' | 'compile-reference';

/** A rule set whose content the engine cannot use. */
export class RuleCompileError extends Error {
  override readonly name = 'RuleCompileError';
  constructor(
    readonly code: CompileErrorCode,
    message: string,
    options?: { cause?: unknown },
  ) {
    super(message, options);
  }
}

function formulaCounts(text: string, where: string): { counts: Counts; charge: number } {
  try {
    const f = parseFormula(text);
    return { counts: countsOf(f), charge: f.charge };
  } catch (cause) {
    throw new RuleCompileError('compile-formula', `${where}: cannot read formula "${text}"`, { cause });
  }
}

function ranges(r: Record<string, readonly [number, number]>): ElementRanges {
  return Object.fromEntries(Object.entries(r)) as ElementRanges;
}

/** Prepares a validated rule set for scoring. Throws {@link RuleCompileError} for content it cannot use. */
export function compileRuleSet(rules: RuleSet): CompiledRuleSet {
  const units: Unit[] = [
    ...rules.residues.map((r, i) => {
      const { counts } = formulaCounts(r.formula, `residues[${i}]`);
      return {
        kind: 'residue' as const,
        name: r.name,
        counts,
        mass: countsMass(counts),
        maxCount: r.maxCount,
        linkages: r.linkages,
        cation: r.oxonium,
      };
    }),
    ...rules.acyls.map((a, i) => {
      const { counts } = formulaCounts(a.formula, `acyls[${i}]`);
      return {
        kind: 'acyl' as const,
        name: a.name,
        counts,
        mass: countsMass(counts),
        maxCount: a.maxCount,
        linkages: [] as ('O' | 'C')[],
        cation: a.acylium,
      };
    }),
  ];
  const residueCount = rules.residues.length;
  const compositions = enumerateCompositions(
    units,
    residueCount,
    rules.limits.maxResidues,
    rules.limits.maxAcyls,
  );
  compositions.sort((a, b) => a.mass - b.mass);

  const byKey = new Map<string, CompiledAglycone[]>();
  rules.aglycones.forEach((a, i) => {
    const { counts, charge } = formulaCounts(a.formula, `aglycones[${i}]`);
    if (charge !== 0 && charge !== 1) {
      throw new RuleCompileError('compile-formula', `aglycones[${i}]: only neutral or +1 cation aglycones`);
    }
    const agl: CompiledAglycone = {
      name: a.name,
      class: a.class,
      source: a.source,
      counts,
      mass: countsMass(counts),
      cation: charge === 1,
    };
    const key = `${Array.from(counts).join(',')}|${charge}`;
    const list = byKey.get(key) ?? [];
    list.push(agl);
    byKey.set(key, list);
  });
  const aglyconeGroups: AglyconeGroup[] = [...byKey.values()].map((members) => ({
    members,
    counts: members[0]!.counts,
    mass: members[0]!.mass,
    cation: members[0]!.cation,
  }));

  const ion = (name: string, where: string): IonType => {
    try {
      return resolveIonType(name);
    } catch (cause) {
      throw new RuleCompileError('compile-ion-type', `${where}: unknown ion type "${name}"`, { cause });
    }
  };
  const ionTypes = {
    positive: rules.ionTypes.positive.map((n, i) => ion(n, `ionTypes.positive[${i}]`)),
    negative: rules.ionTypes.negative.map((n, i) => ion(n, `ionTypes.negative[${i}]`)),
  };

  const crossRingResidue = rules.crossRing.map((x, i) => {
    const k = rules.residues.findIndex((r) => r.name === x.residue);
    if (k < 0)
      throw new RuleCompileError('compile-reference', `crossRing[${i}]: no residue named "${x.residue}"`);
    return k;
  });
  const lossCombos = enumerateLossCombos(rules);
  const n = lossCombos.length;
  const comboNested = new Uint8Array(n * n);
  for (let a = 0; a < n; a++) {
    for (let b = 0; b < n; b++) {
      const A = lossCombos[a]!;
      const B = lossCombos[b]!;
      // A's cross-ring cleavages must be among B's.
      const bx = [B.crossRing, B.crossRing2];
      let ok = true;
      for (const x of [A.crossRing, A.crossRing2]) {
        if (x < 0) continue;
        const k = bx.indexOf(x);
        if (k < 0) ok = false;
        else bx[k] = -2;
      }
      for (let k = 0; ok && k < A.repeats.length; k++) ok = A.repeats[k]! <= B.repeats[k]!;
      comboNested[a * n + b] = ok ? 1 : 0;
    }
  }

  const adductLosses = new Map<string, { counts: Counts; mass: number; name: string }>();
  rules.adductLosses.forEach((l, i) => {
    const { counts } = formulaCounts(l.formula, `adductLosses[${i}]`);
    adductLosses.set(ion(l.ionType, `adductLosses[${i}]`).name, {
      counts,
      mass: countsMass(counts),
      name: l.name,
    });
  });

  const aglyconeRanges = ranges(rules.elements.aglycone);
  return {
    rules,
    units,
    isResidue: Uint8Array.from(units, (u) => (u.kind === 'residue' ? 1 : 0)),
    cLinkable: Uint8Array.from(units, (u) => (u.kind === 'residue' && u.linkages.includes('C') ? 1 : 0)),
    unitPriors: [...rules.residues.map((r) => r.prior), ...rules.acyls.map((a) => a.prior)],
    residueCount,
    compositions,
    compositionMasses: Float64Array.from(compositions, (c) => c.mass),
    aglyconeGroups,
    ionTypes,
    smallLossNames: rules.smallLosses.map((l) => l.name),
    crossRingNames: rules.crossRing.map((x) => x.name),
    crossRingResidue,
    diagnosticCrossRing: diagnosticMap(rules, crossRingResidue),
    crossRingMasses: rules.crossRing.map((x, i) =>
      countsMass(formulaCounts(x.formula, `crossRing[${i}]`).counts),
    ),
    lossCombos,
    comboGroups: {
      positive: groupCombos(lossCombos, (c) => c.positive),
      negative: groupCombos(lossCombos, (c) => c.negative),
    },
    comboNested,
    adductLosses,
    aglyconeDecomposer: createDecomposer({ ranges: aglyconeRanges }),
    precursorDecomposer: createDecomposer({ ranges: ranges(rules.elements.precursor) }),
    aglyconeRanges,
  };
}

function groupCombos(combos: readonly LossCombo[], keep: (c: LossCombo) => boolean) {
  const out = { plain: [] as number[], multi: [] as number[], cross: [] as number[] };
  combos.forEach((c, i) => {
    if (!keep(c)) return;
    if (c.crossRing >= 0) out.cross.push(i);
    else if (c.size > 1) out.multi.push(i);
    else out.plain.push(i);
  });
  return out;
}

function diagnosticMap(rules: RuleSet, residueOf: readonly number[]): Map<number, number[]> {
  const out = new Map<number, number[]>();
  rules.crossRing.forEach((x, i) => {
    if (!x.diagnostic) return;
    const r = residueOf[i]!;
    out.set(r, [...(out.get(r) ?? []), i]);
  });
  return out;
}

function enumerateCompositions(
  units: Unit[],
  residueCount: number,
  maxRes: number,
  maxAcyl: number,
): Composition[] {
  const out: Composition[] = [];
  const cur = new Uint8Array(units.length);
  const walk = (i: number, res: number, acyl: number) => {
    if (i === units.length) {
      if (res === 0) return;
      const counts = new Int32Array(NE);
      for (let u = 0; u < units.length; u++)
        for (let e = 0; e < NE; e++) counts[e]! += cur[u]! * units[u]!.counts[e]!;
      out.push({ units: cur.slice(), counts, mass: countsMass(counts), residues: res, acyls: acyl });
      return;
    }
    const u = units[i]!;
    const isRes = i < residueCount;
    const room = isRes ? maxRes - res : maxAcyl - acyl;
    for (let k = 0; k <= Math.min(u.maxCount, room); k++) {
      cur[i] = k;
      walk(i + 1, res + (isRes ? k : 0), acyl + (isRes ? 0 : k));
    }
    cur[i] = 0;
  };
  walk(0, 0, 0);
  return out;
}

/** Small-loss combinations of at most two single losses (and 3H2O, 2H2O+CO), or one or two cross-ring losses (+H2O). */
function enumerateLossCombos(rules: RuleSet): LossCombo[] {
  const small = rules.smallLosses.map((l, i) => ({ ...l, ...formulaCounts(l.formula, `smallLosses[${i}]`) }));
  const cross = rules.crossRing.map((x, i) => ({ ...x, ...formulaCounts(x.formula, `crossRing[${i}]`) }));
  const water = small.findIndex((l) => l.formula.replace(/\s/g, '') === 'H2O');
  const out: LossCombo[] = [];
  const rep = new Uint8Array(small.length);
  const emit = (crossRing: number, crossRing2 = -1) => {
    const counts = new Int32Array(NE);
    const parts: string[] = [];
    let size = 0;
    let radical = false;
    let positive = true;
    let negative = true;
    for (const c of [crossRing, crossRing2]) {
      if (c < 0) continue;
      const x = cross[c]!;
      for (let e = 0; e < NE; e++) counts[e]! += x.counts[e]!;
      parts.push(x.name);
      size++;
    }
    small.forEach((l, k) => {
      const r = rep[k]!;
      if (r === 0) return;
      for (let e = 0; e < NE; e++) counts[e]! += r * l.counts[e]!;
      parts.push(r === 1 ? l.name : `${r}${l.name}`);
      size += r;
      if (l.radical) radical = radical !== (r % 2 === 1);
      if (l.polarity === 'positive') negative = false;
      if (l.polarity === 'negative') positive = false;
    });
    out.push({
      repeats: rep.slice(),
      crossRing,
      crossRing2,
      counts,
      mass: countsMass(counts),
      size,
      radical,
      name: parts.join('+'),
      positive,
      negative,
    });
  };
  const walk = (k: number, left: number, crossRing: number) => {
    if (k === small.length) {
      emit(crossRing);
      return;
    }
    const l = small[k]!;
    for (let r = 0; r <= Math.min(l.maxRepeat, left); r++) {
      rep[k] = r;
      walk(k + 1, left - r, crossRing);
    }
    rep[k] = 0;
  };
  walk(0, 2, -1);
  // Three waters, or two and a CO, are common from phenolic aglycones; other triples are not enumerated.
  const co = small.findIndex((l) => l.formula.replace(/\s/g, '') === 'CO');
  if (water >= 0 && small[water]!.maxRepeat >= 3) {
    rep.fill(0);
    rep[water] = 3;
    emit(-1);
    if (co >= 0) {
      rep[water] = 2;
      rep[co] = 1;
      emit(-1);
    }
    rep.fill(0);
  }
  cross.forEach((x, c) => {
    // A cross-ring ion may also lose water (rule `withWater`), nothing else.
    rep.fill(0);
    emit(c);
    if (x.withWater && water >= 0) {
      rep[water] = 1;
      emit(c);
      rep[water] = 0;
    }
    // Both C-linked sugars of a di-C-glycoside cleaved (the second rule index not below the first).
    for (let c2 = c; c2 < cross.length; c2++) {
      rep.fill(0);
      emit(c, c2);
      if (x.withWater && water >= 0) {
        rep[water] = 1;
        emit(c, c2);
        rep[water] = 0;
      }
    }
  });
  out.sort((a, b) => a.size - b.size || a.mass - b.mass);
  return out;
}
