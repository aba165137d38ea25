/**
 * The chemistry tables of the simulator: its own aglycones, residues, acyl groups, ion types and decoy
 * building blocks. Written from the chemistry (REFERENCE.md and the sources named beside each entry),
 * deliberately independent of the engine's rule set so the quality benchmark is not tuned to it.
 * Formulas are neutral unless they carry a charge (flavylium aglycones are cations, [M]⁺).
 */

/** Sugar residues (sugar minus the water of its glycosidic bond); REFERENCE.md §2. */
export const RESIDUES = {
  Hex: 'C6H10O5',
  Pen: 'C5H8O4',
  dHex: 'C6H10O4',
  HexA: 'C6H8O6',
} as const;
/** A sugar residue name (generic glycan names). */
export type ResidueName = keyof typeof RESIDUES;
export const RESIDUE_NAMES = Object.keys(RESIDUES) as ResidueName[];

/**
 * Acyl groups (acid minus water), REFERENCE.md §2 (Wu & Prior 2005, J Agric Food Chem 53:3101, for most;
 * succinyl and galloyl from memory). `aromatic`: gives an acylium ion RCO⁺ in positive mode.
 */
export const ACYLS = {
  acetyl: { formula: 'C2H2O', aromatic: false },
  malonyl: { formula: 'C3H2O3', aromatic: false },
  succinyl: { formula: 'C4H4O3', aromatic: false },
  'p-coumaroyl': { formula: 'C9H6O2', aromatic: true },
  caffeoyl: { formula: 'C9H6O3', aromatic: true },
  feruloyl: { formula: 'C10H8O3', aromatic: true },
  sinapoyl: { formula: 'C11H10O4', aromatic: true },
  galloyl: { formula: 'C7H4O4', aromatic: true },
  'p-hydroxybenzoyl': { formula: 'C7H4O2', aromatic: true },
  oxaloyl: { formula: 'C2O3', aromatic: false },
} as const;
/** An acyl group name (lower case, as in the results contract). */
export type AcylName = keyof typeof ACYLS;
export const ACYL_NAMES = Object.keys(ACYLS) as AcylName[];

/** Aglycone classes of the simulator. */
export type AglyconeClass =
  | 'anthocyanidin'
  | 'flavonol'
  | 'flavone'
  | 'flavanone'
  | 'isoflavone'
  | 'dihydrochalcone'
  | 'flavan-3-ol'
  | 'stilbene'
  | 'hydroxycinnamic acid'
  | 'hydroxybenzoic acid'
  | 'coumarin'
  | 'anthraquinone'
  | 'simple phenol';

/** Hydroxy and methoxy groups on the A and B rings of a flavonoid, for its ring-cleavage ions. */
export interface RingSubstitution {
  aOH: number;
  aOMe: number;
  bOH: number;
  bOMe: number;
}

/** One aglycone of the simulator's library. */
export interface AglyconeDef {
  name: string;
  class: AglyconeClass;
  /** Neutral formula, or the flavylium cation (`C15H11O6+`) for anthocyanidins. */
  formula: string;
  /** O-glycosylation positions, commonest first. */
  oSites: readonly string[];
  /** C-glycosylation positions (flavones only). */
  cSites?: readonly string[];
  rings?: RingSubstitution;
  /** Methoxy groups: each can be lost as CH3•. */
  methoxy: number;
  /** Band I (or main) absorbance maximum range, nm, for the optional chemist metadata. */
  lambdaMax: readonly [number, number];
  /** Relative sampling weight. */
  weight: number;
  /** Most residues it realistically carries. */
  maxResidues: number;
}

const r = (aOH: number, aOMe: number, bOH: number, bOMe: number): RingSubstitution => ({
  aOH,
  aOMe,
  bOH,
  bOMe,
});

// Formulas: standard structures of each compound [trade]; ranges of λmax: common practice (flavonol band I
// 350–370 nm, flavone 330–350, anthocyanin 500–540 visible maximum; REFERENCE.md §3 "near 520 nm").
const ANTHO = ['3', '5', '7', '3′'] as const;
const FLAVONOL = ['3', '7', '4′', '3′'] as const;
const FLAVONE = ['7', '4′', '5', '3′'] as const;
const FLAVANONE = ['7', '4′', '5'] as const;
const ISOFLAVONE = ['7', '4′'] as const;
const C_SITES = ['8', '6'] as const;

/** The simulator's library of common aglycones (about 55, across the classes the issue names). */
export const AGLYCONES: readonly AglyconeDef[] = [
  // Anthocyanidins (flavylium cations, REFERENCE.md §3).
  a('pelargonidin', 'anthocyanidin', 'C15H11O5+', ANTHO, r(2, 0, 1, 0), 0, [500, 515], 3),
  a('cyanidin', 'anthocyanidin', 'C15H11O6+', ANTHO, r(2, 0, 2, 0), 0, [512, 525], 6),
  a('delphinidin', 'anthocyanidin', 'C15H11O7+', ANTHO, r(2, 0, 3, 0), 0, [520, 535], 4),
  a('peonidin', 'anthocyanidin', 'C16H13O6+', ANTHO, r(2, 0, 1, 1), 1, [512, 525], 3),
  a('petunidin', 'anthocyanidin', 'C16H13O7+', ANTHO, r(2, 0, 2, 1), 1, [520, 535], 3),
  a('malvidin', 'anthocyanidin', 'C17H15O7+', ANTHO, r(2, 0, 1, 2), 2, [520, 540], 4),
  // Flavonols.
  a('kaempferol', 'flavonol', 'C15H10O6', FLAVONOL, r(2, 0, 1, 0), 0, [345, 368], 5),
  a('quercetin', 'flavonol', 'C15H10O7', FLAVONOL, r(2, 0, 2, 0), 0, [352, 372], 7),
  a('myricetin', 'flavonol', 'C15H10O8', FLAVONOL, r(2, 0, 3, 0), 0, [352, 375], 3),
  a('isorhamnetin', 'flavonol', 'C16H12O7', FLAVONOL, r(2, 0, 1, 1), 1, [352, 370], 3),
  a('tamarixetin', 'flavonol', 'C16H12O7', FLAVONOL, r(2, 0, 1, 1), 1, [350, 368], 1),
  a('rhamnetin', 'flavonol', 'C16H12O7', ['3', '4′', '3′'], r(1, 1, 2, 0), 1, [352, 370], 1),
  a('syringetin', 'flavonol', 'C17H14O8', FLAVONOL, r(2, 0, 1, 2), 2, [355, 372], 1),
  a('laricitrin', 'flavonol', 'C16H12O8', FLAVONOL, r(2, 0, 2, 1), 1, [355, 372], 1),
  a('galangin', 'flavonol', 'C15H10O5', ['3', '7'], r(2, 0, 0, 0), 0, [340, 360], 1),
  a('fisetin', 'flavonol', 'C15H10O6', ['3', '7', '4′'], r(1, 0, 2, 0), 0, [355, 370], 1),
  // Flavones (the only class given C-glycosides here).
  a('apigenin', 'flavone', 'C15H10O5', FLAVONE, r(2, 0, 1, 0), 0, [330, 340], 5, C_SITES),
  a('luteolin', 'flavone', 'C15H10O6', FLAVONE, r(2, 0, 2, 0), 0, [345, 352], 5, C_SITES),
  a('chrysoeriol', 'flavone', 'C16H12O6', FLAVONE, r(2, 0, 1, 1), 1, [342, 350], 2, C_SITES),
  a('diosmetin', 'flavone', 'C16H12O6', FLAVONE, r(2, 0, 1, 1), 1, [340, 348], 2, C_SITES),
  a('acacetin', 'flavone', 'C16H12O5', ['7', '5'], r(2, 0, 0, 1), 1, [325, 335], 1, C_SITES),
  a('chrysin', 'flavone', 'C15H10O4', ['7', '5'], r(2, 0, 0, 0), 0, [265, 315], 1),
  a('baicalein', 'flavone', 'C15H10O5', ['7', '6'], r(3, 0, 0, 0), 0, [270, 325], 2),
  a('scutellarein', 'flavone', 'C15H10O6', ['7', '4′'], r(3, 0, 1, 0), 0, [330, 340], 1),
  a('wogonin', 'flavone', 'C16H12O5', ['7', '5'], r(2, 1, 0, 0), 1, [270, 340], 1),
  a('tricin', 'flavone', 'C17H14O7', ['7', '4′', '5'], r(2, 0, 1, 2), 2, [345, 355], 1),
  // Flavanones.
  a('naringenin', 'flavanone', 'C15H12O5', FLAVANONE, r(2, 0, 1, 0), 0, [283, 290], 4),
  a('eriodictyol', 'flavanone', 'C15H12O6', FLAVANONE, r(2, 0, 2, 0), 0, [284, 290], 2),
  a('hesperetin', 'flavanone', 'C16H14O6', FLAVANONE, r(2, 0, 1, 1), 1, [283, 288], 3),
  a('homoeriodictyol', 'flavanone', 'C16H14O6', FLAVANONE, r(2, 0, 1, 1), 1, [284, 290], 1),
  a('isosakuranetin', 'flavanone', 'C16H14O5', ['7', '5'], r(2, 0, 0, 1), 1, [283, 288], 1),
  a('pinocembrin', 'flavanone', 'C15H12O4', ['7', '5'], r(2, 0, 0, 0), 0, [288, 292], 1),
  // Isoflavones.
  a('daidzein', 'isoflavone', 'C15H10O4', ISOFLAVONE, r(1, 0, 1, 0), 0, [248, 255], 3),
  a('genistein', 'isoflavone', 'C15H10O5', ISOFLAVONE, r(2, 0, 1, 0), 0, [258, 263], 3),
  a('glycitein', 'isoflavone', 'C16H12O5', ISOFLAVONE, r(1, 1, 1, 0), 1, [255, 260], 1),
  a('formononetin', 'isoflavone', 'C16H12O4', ['7'], r(1, 0, 0, 1), 1, [248, 252], 1),
  a('biochanin A', 'isoflavone', 'C16H12O5', ['7', '5'], r(2, 0, 0, 1), 1, [258, 262], 1),
  // Dihydrochalcones and flavan-3-ols.
  a('phloretin', 'dihydrochalcone', 'C15H14O5', ['2′', '4′'], undefined, 0, [283, 288], 2),
  a('catechin', 'flavan-3-ol', 'C15H14O6', ['3', '7', '5'], undefined, 0, [277, 282], 1),
  a('epicatechin', 'flavan-3-ol', 'C15H14O6', ['3', '7', '5'], undefined, 0, [277, 282], 1),
  // Stilbenes.
  a('resveratrol', 'stilbene', 'C14H12O3', ['3', '4′'], undefined, 0, [305, 320], 3),
  a('piceatannol', 'stilbene', 'C14H12O4', ['3', '4′'], undefined, 0, [320, 330], 1),
  a('rhapontigenin', 'stilbene', 'C15H14O4', ['3'], undefined, 1, [320, 328], 1),
  // Hydroxycinnamic and hydroxybenzoic acids (glycosides on the phenol).
  a('p-coumaric acid', 'hydroxycinnamic acid', 'C9H8O3', ['4'], undefined, 0, [305, 312], 2),
  a('caffeic acid', 'hydroxycinnamic acid', 'C9H8O4', ['4', '3'], undefined, 0, [322, 328], 3),
  a('ferulic acid', 'hydroxycinnamic acid', 'C10H10O4', ['4'], undefined, 1, [318, 324], 2),
  a('sinapic acid', 'hydroxycinnamic acid', 'C11H12O5', ['4'], undefined, 2, [322, 328], 1),
  a('gallic acid', 'hydroxybenzoic acid', 'C7H6O5', ['4', '3'], undefined, 0, [270, 275], 2),
  a('protocatechuic acid', 'hydroxybenzoic acid', 'C7H6O4', ['4', '3'], undefined, 0, [258, 262], 1),
  a('vanillic acid', 'hydroxybenzoic acid', 'C8H8O4', ['4'], undefined, 1, [258, 262], 1),
  a('syringic acid', 'hydroxybenzoic acid', 'C9H10O5', ['4'], undefined, 2, [272, 276], 1),
  a('p-hydroxybenzoic acid', 'hydroxybenzoic acid', 'C7H6O3', ['4'], undefined, 0, [254, 258], 1),
  // Coumarins, anthraquinones, simple phenols.
  a('umbelliferone', 'coumarin', 'C9H6O3', ['7'], undefined, 0, [320, 325], 1),
  a('esculetin', 'coumarin', 'C9H6O4', ['6', '7'], undefined, 0, [335, 345], 1),
  a('scopoletin', 'coumarin', 'C10H8O4', ['7'], undefined, 1, [340, 345], 1),
  a('emodin', 'anthraquinone', 'C15H10O5', ['6', '8'], undefined, 0, [435, 440], 1),
  a('hydroquinone', 'simple phenol', 'C6H6O2', ['1'], undefined, 0, [285, 290], 1),
];

function a(
  name: string,
  cls: AglyconeClass,
  formula: string,
  oSites: readonly string[],
  rings: RingSubstitution | undefined,
  methoxy: number,
  lambdaMax: readonly [number, number],
  weight: number,
  cSites?: readonly string[],
): AglyconeDef {
  const small = cls === 'hydroxybenzoic acid' || cls === 'hydroxycinnamic acid' || cls === 'simple phenol';
  const def: AglyconeDef = {
    name,
    class: cls,
    formula,
    oSites,
    methoxy,
    lambdaMax,
    weight,
    maxResidues: small ? 3 : cls === 'coumarin' || cls === 'stilbene' ? 4 : 5,
  };
  if (rings) def.rings = rings;
  if (cSites) def.cSites = cSites;
  return def;
}

/** Class weights for sampling (anthocyanins and flavonols dominate plant-pigment work). */
export const CLASS_WEIGHTS: Record<AglyconeClass, number> = {
  anthocyanidin: 0.2,
  flavonol: 0.24,
  flavone: 0.17,
  flavanone: 0.08,
  isoflavone: 0.07,
  dihydrochalcone: 0.02,
  'flavan-3-ol': 0.02,
  stilbene: 0.04,
  'hydroxycinnamic acid': 0.06,
  'hydroxybenzoic acid': 0.04,
  coumarin: 0.03,
  anthraquinone: 0.02,
  'simple phenol': 0.01,
};

/** Ion types the simulator writes, with the formula added to M and the charge. */
export interface IonTypeDef {
  name: IonTypeName;
  polarity: 'positive' | 'negative';
  charge: number;
  /** Formula added to the neutral M (negative counts: removed). Empty for [M]⁺. */
  add: Partial<Record<'H' | 'Na' | 'K' | 'N' | 'C' | 'O' | 'Cl', number>>;
}
export type IonTypeName =
  | '[M]+'
  | '[M+H]+'
  | '[M+Na]+'
  | '[M+K]+'
  | '[M+NH4]+'
  | '[M+2H]2+'
  | '[M-H]-'
  | '[M+HCOO]-'
  | '[M+Cl]-'
  | '[M-2H]2-';

/** Adduct arithmetic per ion type (REFERENCE.md §1: ions are formula mass minus charge × electron mass). */
export const ION_TYPES: Record<IonTypeName, IonTypeDef> = {
  '[M]+': { name: '[M]+', polarity: 'positive', charge: 1, add: {} },
  '[M+H]+': { name: '[M+H]+', polarity: 'positive', charge: 1, add: { H: 1 } },
  '[M+Na]+': { name: '[M+Na]+', polarity: 'positive', charge: 1, add: { Na: 1 } },
  '[M+K]+': { name: '[M+K]+', polarity: 'positive', charge: 1, add: { K: 1 } },
  '[M+NH4]+': { name: '[M+NH4]+', polarity: 'positive', charge: 1, add: { N: 1, H: 4 } },
  '[M+2H]2+': { name: '[M+2H]2+', polarity: 'positive', charge: 2, add: { H: 2 } },
  '[M-H]-': { name: '[M-H]-', polarity: 'negative', charge: -1, add: { H: -1 } },
  '[M+HCOO]-': { name: '[M+HCOO]-', polarity: 'negative', charge: -1, add: { C: 1, H: 1, O: 2 } },
  '[M+Cl]-': { name: '[M+Cl]-', polarity: 'negative', charge: -1, add: { Cl: 1 } },
  '[M-2H]2-': { name: '[M-2H]2-', polarity: 'negative', charge: -2, add: { H: -2 } },
};
export const ION_TYPE_NAMES = Object.keys(ION_TYPES) as IonTypeName[];

/** Amino-acid residues (amino acid minus water) for peptide decoys [trade: standard residue formulas]. */
export const AMINO_ACIDS: Record<string, string> = {
  G: 'C2H3NO',
  A: 'C3H5NO',
  S: 'C3H5NO2',
  P: 'C5H7NO',
  V: 'C5H9NO',
  T: 'C4H7NO2',
  L: 'C6H11NO',
  I: 'C6H11NO',
  N: 'C4H6N2O2',
  D: 'C4H5NO3',
  Q: 'C5H8N2O2',
  K: 'C6H12N2O',
  E: 'C5H7NO3',
  M: 'C5H9NOS',
  H: 'C6H7N3O',
  F: 'C9H9NO',
  R: 'C6H12N4O',
  Y: 'C9H9NO2',
  W: 'C11H10N2O',
};

/** Fatty acids (free acid formulas) for lipid decoys: chain length, double bonds [trade]. */
export const FATTY_ACIDS: readonly { name: string; c: number; db: number }[] = [
  { name: '14:0', c: 14, db: 0 },
  { name: '16:0', c: 16, db: 0 },
  { name: '16:1', c: 16, db: 1 },
  { name: '18:0', c: 18, db: 0 },
  { name: '18:1', c: 18, db: 1 },
  { name: '18:2', c: 18, db: 2 },
  { name: '18:3', c: 18, db: 3 },
  { name: '20:4', c: 20, db: 4 },
  { name: '22:6', c: 22, db: 6 },
];

/**
 * Further known aglycones, never drawn, only kept out of the invented "unknown" ones so that an unknown's
 * formula is in no common library [trade; formulas from memory]: 3-deoxyanthocyanidins, flavanonols,
 * chalcones, gallocatechin, ellagic acid, xanthones, simple phenols and alcohols, N-containing and terpenoid
 * aglycones.
 */
export const OTHER_KNOWN_AGLYCONE_FORMULAS: readonly string[] = [
  'C15H11O4+', // apigeninidin
  'C15H11O5+', // luteolinidin
  'C15H12O4', // liquiritigenin, isoliquiritigenin
  'C15H12O7', // taxifolin
  'C15H12O6', // aromadendrin
  'C15H12O8', // dihydromyricetin
  'C15H14O7', // gallocatechin
  'C14H6O8', // ellagic acid
  'C13H8O6', // norathyriol
  'C7H8O2', // salicyl alcohol
  'C8H10O2', // tyrosol
  'C8H10O3', // hydroxytyrosol
  'C10H12O3', // coniferyl alcohol
  'C11H14O4', // sinapyl alcohol
  'C8H7NO', // indoxyl, mandelonitrile
  'C30H48O3', // oleanolic acid
  'C30H48O4', // hederagenin
  'C30H46O4', // glycyrrhetinic acid
  'C27H42O3', // diosgenin
  'C20H30O3', // steviol
  'C30H52O3', // protopanaxadiol
  'C30H52O4', // protopanaxatriol
  'C16H12O6', // kaempferide
  'C16H12O8', // patuletin
  'C15H8O5', // coumestrol
  'C15H14O3', // equol
  'C20H22O6', // pinoresinol
  'C20H24O6', // lariciresinol
  'C20H26O6', // secoisolariciresinol
  'C9H10O2', // p-coumaryl alcohol
  'C9H8O2', // cinnamic acid-like
  'C7H6O2', // benzaldehyde-like / p-hydroxybenzaldehyde
  'C8H8O3', // vanillin
  'C6H6O3', // pyrogallol, phloroglucinol
  'C6H6O', // phenol
  'C15H10O3', // flavone-like
  'C15H10O7', // morin, herbacetin
  'C16H14O4', // dihydro-methoxy-stilbenes
  'C16H16O3', // pterostilbene-like
  'C15H14O4', // rhapontigenin-like
  'C21H20O6', // curcumin
];
