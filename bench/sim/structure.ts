/**
 * Glycoside structures of the simulator: an aglycone (from the library or an invented "unknown" one),
 * sugar trees on one to three of its positions (O- or C-linked), and acyl groups esterified to a given sugar.
 */
import { f, type Formula, formatFormula, isValid, neutralMass, subtract, sum } from './chem.js';
import type { Rng } from './prng.js';
import {
  ACYL_NAMES,
  ACYLS,
  type AcylName,
  AGLYCONES,
  type AglyconeClass,
  type AglyconeDef,
  CLASS_WEIGHTS,
  OTHER_KNOWN_AGLYCONE_FORMULAS,
  RESIDUES,
  type ResidueName,
} from './tables.js';

/** A sugar in a glycoside's sugar tree. */
export interface SugarNode {
  residue: ResidueName;
  /** How it is bound to its parent (the aglycone or another sugar). */
  linkage: 'O' | 'C';
  children: SugarNode[];
  /** Acyl groups esterified to this sugar. */
  acyls: AcylName[];
}

/** Sugars on one aglycone position. */
export interface Site {
  position: string;
  root: SugarNode;
}

/** An aglycone as used in one structure. */
export interface AglyconeInstance {
  /** Library name, or `unknown`. */
  name: string;
  class: AglyconeClass;
  /** Neutral formula, or the flavylium cation. */
  formula: Formula;
  library: boolean;
  /** The library aglycone it was derived from (unknown aglycones) or itself. */
  scaffold: AglyconeDef;
  /** How an unknown aglycone differs from its scaffold, e.g. `+OCH2 (methoxy) on ring B`. */
  modification?: string;
  /** The formula change of an unknown aglycone and the ring that carries it (shifts ring-cleavage ions). */
  shift?: { ring: 'A' | 'B'; delta: Formula };
}

/** A glycosylated natural product. */
export interface GlycosideStructure {
  aglycone: AglyconeInstance;
  sites: Site[];
}

/** Neutral formula (or cation formula for flavylium glycosides) of a structure. */
export function structureFormula(s: GlycosideStructure): Formula {
  const parts: Formula[] = [s.aglycone.formula];
  for (const site of s.sites) walk(site.root, (n) => parts.push(residueFormula(n)));
  return sum(...parts);
}

/** Formula a sugar node adds: its residue plus its acyl groups. */
export function residueFormula(n: SugarNode): Formula {
  const parts = [f(RESIDUES[n.residue])];
  for (const ac of n.acyls) parts.push(f(ACYLS[ac].formula));
  return sum(...parts);
}

/** Visits every sugar of a tree, parents first. */
export function walk(
  n: SugarNode,
  visit: (n: SugarNode, parent: SugarNode | undefined) => void,
  parent?: SugarNode,
): void {
  visit(n, parent);
  for (const c of n.children) walk(c, visit, n);
}

/** All sugars of a structure. */
export function sugars(s: GlycosideStructure): SugarNode[] {
  const out: SugarNode[] = [];
  for (const site of s.sites) walk(site.root, (n) => out.push(n));
  return out;
}

/**
 * The topology in the simulator's position-free notation (MS2 cannot tell linkage positions): each site is
 * a sugar tree written root first, children in parentheses, acyl groups in square brackets, C-linked sugars
 * prefixed `C-`; sites joined by ` + `; every list sorted so equal structures give equal strings.
 * Example: a quercetin 3-O-rutinoside is `Hex(dHex)`; a cyanidin 3-O-(6″-p-coumaroyl)glucoside-5-O-glucoside
 * is `Hex + Hex[p-coumaroyl]`.
 */
export function canonicalTopology(sites: readonly { root: SugarNode }[]): string {
  return sites
    .map((s) => nodeString(s.root))
    .sort()
    .join(' + ');
}

function nodeString(n: SugarNode): string {
  let s = (n.linkage === 'C' ? 'C-' : '') + n.residue;
  if (n.acyls.length > 0) s += `[${[...n.acyls].sort().join(',')}]`;
  if (n.children.length > 0) s += `(${n.children.map(nodeString).sort().join(',')})`;
  return s;
}

/** Library aglycone lookup by name. */
export function aglyconeByName(name: string): AglyconeDef {
  const def = AGLYCONES.find((x) => x.name === name);
  if (!def) throw new RangeError(`no simulator aglycone named ${name}`);
  return def;
}

/** A library aglycone instance. */
export function libraryAglycone(def: AglyconeDef): AglyconeInstance {
  return { name: def.name, class: def.class, formula: f(def.formula), library: true, scaffold: def };
}

const MODIFICATIONS: readonly { text: string; delta: string; minus?: boolean; weight: number }[] = [
  { text: '+CH2O (extra methoxy)', delta: 'CH2O', weight: 3 },
  { text: '+CH2 (O- or C-methyl)', delta: 'CH2', weight: 3 },
  { text: '+O (extra hydroxy)', delta: 'O', weight: 3 },
  { text: '+C5H8 (prenyl)', delta: 'C5H8', weight: 2 },
  { text: '+C5H8O (hydroxyprenyl)', delta: 'C5H8O', weight: 1 },
  { text: '+C2H4 (dimethyl)', delta: 'C2H4', weight: 1 },
  { text: '-O (deoxy)', delta: 'O', minus: true, weight: 1 },
  { text: '+H2 (dihydro)', delta: 'H2', weight: 1 },
  { text: '+C10H16 (geranyl)', delta: 'C10H16', weight: 0.5 },
  { text: '+NH (amino)', delta: 'NH', weight: 0.6 },
  { text: '+C2H3N (aminoethyl)', delta: 'C2H3N', weight: 0.3 },
];

/**
 * A formula as the singly charged cation it shows as in positive mode: a flavylium as it is, a neutral
 * aglycone protonated. A flavylium and a protonated neutral with the same key cannot be told apart
 * (cyanidin⁺ = kaempferol [M+H]⁺, REFERENCE.md §3), so invented aglycones are compared on this key.
 */
function ionKey(x: Formula): string {
  return formatFormula(x.charge === 1 ? x : { counts: sum(x, f('H')).counts, charge: 1 });
}

const KNOWN_AGLYCONE_FORMULAS = [...AGLYCONES.map((d) => d.formula), ...OTHER_KNOWN_AGLYCONE_FORMULAS];

/** Ion keys of every library aglycone (neutral or cation) — an invented one must not hit these. */
const LIBRARY_FORMULAS = new Set(KNOWN_AGLYCONE_FORMULAS.map((x) => ionKey(f(x))));

/**
 * Ion keys the engine could explain as a library aglycone plus or minus one residue, acyl group or small
 * loss: an invented aglycone must differ from every library aglycone by something else, or the honest
 * answer would be ambiguous rather than "unknown".
 */
const NEAR_LIBRARY = (() => {
  const out = new Set<string>();
  const deltas = [...Object.values(RESIDUES), ...ACYL_NAMES.map((n) => ACYLS[n].formula), 'H2O', 'CO', 'CO2'];
  for (const formula of KNOWN_AGLYCONE_FORMULAS) {
    const base = f(formula);
    for (const delta of deltas) {
      for (const sign of [1, -1]) {
        const x = sign > 0 ? sum(base, f(delta)) : subtract(base, f(delta));
        if (isValid(x)) out.add(ionKey(x));
      }
    }
  }
  return out;
})();

/**
 * An invented aglycone: a library scaffold with one or two plausible modifications, checked to be in no
 * library and not one residue or acyl group away from a library aglycone. Expected answer: `unknown`.
 */
export function unknownAglycone(rng: Rng, extraForbidden?: ReadonlySet<string>): AglyconeInstance {
  for (let attempt = 0; attempt < 200; attempt++) {
    const scaffold = pickAglyconeDef(rng);
    const nMods = rng.chance(0.35) ? 2 : 1;
    let formula = f(scaffold.formula);
    const texts: string[] = [];
    let delta = f('H0');
    for (let i = 0; i < nMods; i++) {
      const m = rng.weighted(MODIFICATIONS, (x) => x.weight);
      const d = f(m.delta);
      if (m.minus) {
        formula = subtract(formula, d);
        delta = subtract(delta, d);
      } else {
        formula = sum(formula, d);
        delta = sum(delta, d);
      }
      texts.push(m.text);
    }
    if (!isValid(formula) || formula.counts[3]! < 1) continue;
    const k = ionKey(formula);
    if (
      LIBRARY_FORMULAS.has(k) ||
      NEAR_LIBRARY.has(k) ||
      extraForbidden?.has(k) ||
      extraForbidden?.has(formatFormula(formula))
    )
      continue;
    const ring: 'A' | 'B' = rng.chance(0.5) ? 'A' : 'B';
    return {
      name: 'unknown',
      class: scaffold.class,
      formula,
      library: false,
      scaffold,
      modification: `${scaffold.name} ${texts.join(', ')} on ring ${ring}`,
      shift: { ring, delta },
    };
  }
  throw new Error('could not invent an unknown aglycone');
}

/** A library aglycone definition, by class weight then by weight within the class. */
export function pickAglyconeDef(rng: Rng, filter?: (d: AglyconeDef) => boolean): AglyconeDef {
  if (!filter) return rng.weighted(AGLYCONES, (d) => DEF_WEIGHTS.get(d)!);
  return rng.weighted(AGLYCONES.filter(filter), (d) => DEF_WEIGHTS.get(d)!);
}

const DEF_WEIGHTS = (() => {
  const classTotals = new Map<AglyconeClass, number>();
  for (const d of AGLYCONES) classTotals.set(d.class, (classTotals.get(d.class) ?? 0) + d.weight);
  return new Map(AGLYCONES.map((d) => [d, (CLASS_WEIGHTS[d.class] * d.weight) / classTotals.get(d.class)!]));
})();

/** Options of {@link randomGlycoside}. */
export interface RandomGlycosideOptions {
  /** Probability of an invented (unknown) aglycone. @defaultValue 0.13 */
  unknownFraction?: number;
  /** Probability of one acyl group. @defaultValue 0.3 */
  acylFraction?: number;
  /** Probability that a flavone aglycone carries C-linked sugars. @defaultValue 0.35 */
  cGlycosideFraction?: number;
  /** Restrict the aglycone (library name) — for scenarios. */
  aglycone?: string;
  /** Largest neutral mass. @defaultValue 1200 */
  maxMass?: number;
  /** Formulas (Hill, with charge) an invented aglycone must not have, e.g. the engine library's. */
  forbiddenUnknownFormulas?: ReadonlySet<string>;
}

const RESIDUE_WEIGHTS: Record<ResidueName, number> = { Hex: 0.55, dHex: 0.18, Pen: 0.15, HexA: 0.12 };
const COUNT_WEIGHTS = [0.34, 0.3, 0.17, 0.12, 0.07];

/** A random glycoside with 1–5 residues and 0–1 acyl groups on a real topology. */
export function randomGlycoside(rng: Rng, options: RandomGlycosideOptions = {}): GlycosideStructure {
  const maxMass = options.maxMass ?? 1200;
  for (let attempt = 0; attempt < 100; attempt++) {
    const s = tryGlycoside(rng, options);
    if (massOf(s) <= maxMass) return s;
  }
  throw new Error('could not draw a glycoside under the mass limit');
}

function massOf(s: GlycosideStructure): number {
  return neutralMass(structureFormula(s));
}

function tryGlycoside(rng: Rng, o: RandomGlycosideOptions): GlycosideStructure {
  const unknown = o.aglycone === undefined && rng.chance(o.unknownFraction ?? 0.13);
  const aglycone = unknown
    ? unknownAglycone(rng, o.forbiddenUnknownFormulas)
    : libraryAglycone(o.aglycone ? aglyconeByName(o.aglycone) : pickAglyconeDef(rng));
  const def = aglycone.scaffold;
  const maxN = Math.min(5, def.maxResidues);
  const n = 1 + pickIndex(rng, COUNT_WEIGHTS.slice(0, maxN));
  const residues: ResidueName[] = [];
  for (let i = 0; i < n; i++)
    residues.push(rng.weighted(Object.keys(RESIDUE_WEIGHTS) as ResidueName[], (r) => RESIDUE_WEIGHTS[r]));

  const sites: Site[] = [];
  const cGlyc =
    def.cSites !== undefined && aglycone.class === 'flavone' && rng.chance(o.cGlycosideFraction ?? 0.35);
  let pool = [...residues];
  if (cGlyc) {
    // C-glycosides: Hex or Pen directly on C-6/C-8 (REFERENCE.md §4: vitexin, neomangiferin).
    const nC = pool.length >= 2 && rng.chance(0.25) ? 2 : 1;
    const cPositions = rng.shuffle([...def.cSites!]).slice(0, nC);
    for (const pos of cPositions) {
      const residue: ResidueName = rng.chance(0.75) ? 'Hex' : 'Pen';
      pool.shift();
      sites.push({ position: pos, root: { residue, linkage: 'C', children: [], acyls: [] } });
    }
    // The rest: O-linked on a C-sugar (2″-O-glycosyl) or on the 7-OH.
    for (const residue of pool) {
      if (rng.chance(0.55)) {
        const host = rng.pick(sites);
        attachRandom(rng, host.root, { residue, linkage: 'O', children: [], acyls: [] });
      } else {
        const o7 = sites.find((s) => s.position === '7');
        if (o7) attachRandom(rng, o7.root, { residue, linkage: 'O', children: [], acyls: [] });
        else sites.push({ position: '7', root: { residue, linkage: 'O', children: [], acyls: [] } });
      }
    }
    pool = [];
  } else {
    const maxSites = Math.min(pool.length, def.oSites.length, 3);
    const nSites = 1 + pickIndex(rng, [0.62, 0.3, 0.08].slice(0, maxSites));
    // Commonest positions first (flavonol 3-O, anthocyanidin 3-O then 5-O, flavone 7-O…).
    const positions: string[] = [];
    const avail = [...def.oSites];
    while (positions.length < nSites) {
      const i = rng.chance(0.7) ? 0 : rng.int(0, avail.length - 1);
      positions.push(avail.splice(i, 1)[0]!);
    }
    positions.forEach((position, i) => {
      sites.push({ position, root: { residue: pool[i]!, linkage: 'O', children: [], acyls: [] } });
    });
    for (const residue of pool.slice(nSites)) {
      const host = rng.weighted(sites, (s) => (s === sites[0] ? 2 : 1));
      attachRandom(rng, host.root, { residue, linkage: 'O', children: [], acyls: [] });
    }
  }
  const structure: GlycosideStructure = { aglycone, sites };
  if (rng.chance(o.acylFraction ?? 0.3)) {
    // Acyl on an O-linked sugar (often the 6″ of the inner hexose in anthocyanins).
    const hosts = sugars(structure).filter((x) => x.linkage === 'O');
    if (hosts.length > 0) {
      const host = rng.weighted(hosts, (x) => (x.residue === 'Hex' ? 3 : 1));
      host.acyls.push(rng.pick(ACYL_NAMES));
    }
  }
  return structure;
}

/** Attaches a sugar somewhere in a tree: mostly at the end of a chain (linear oligosaccharides), sometimes branching. */
function attachRandom(rng: Rng, root: SugarNode, child: SugarNode): void {
  let at = root;
  while (at.children.length > 0 && rng.chance(0.75)) at = rng.pick(at.children);
  if (at.children.length >= 2) at = root;
  at.children.push(child);
}

function pickIndex(rng: Rng, weights: readonly number[]): number {
  return rng.weighted(
    weights.map((w, i) => ({ w, i })),
    (x) => x.w,
  ).i;
}
