import { z } from 'zod';

const FormulaString = z
  .string()
  .min(1)
  .max(200)
  .regex(/^[A-Za-z0-9+\- ]+$/, 'a formula such as C6H10O5 or C15H11O6+');
const Name = z
  .string()
  .min(1)
  .max(80)
  // A leading "(" allows names such as "(epi)catechin" for stereoisomers MS cannot tell apart.
  .regex(/^[A-Za-z0-9(][A-Za-z0-9,'′″\-_ ()]*$/, "letters, digits, spaces and , ' - _ ( )");
const Source = z.string().min(1).max(400);
const ElementRange = z.tuple([z.number().int().min(0), z.number().int().min(0)]);
const ElementRanges = z.record(z.string(), ElementRange);

/** A sugar residue (sugar minus the water of its glycosidic bond). */
export const ResidueRuleSchema = z.object({
  name: Name,
  formula: FormulaString,
  description: z.string().optional(),
  /** How it may be bound: O-glycoside, C-glycoside. */
  linkages: z
    .array(z.enum(['O', 'C']))
    .min(1)
    .default(['O']),
  /** At most this many of this residue in one candidate. */
  maxCount: z.number().int().min(0).max(10).default(4),
  /** Whether its oxonium (B) ion is expected in positive mode. */
  oxonium: z.boolean().default(true),
  /** Prior score of each occurrence: how common the residue is among glycosides (breaks evidence ties only). */
  prior: z.number().min(-5).max(5).default(0),
  source: Source,
});

/** An acyl group (acid minus water), bound by an ester to a sugar (or the aglycone). */
export const AcylRuleSchema = z.object({
  name: Name,
  formula: FormulaString,
  description: z.string().optional(),
  maxCount: z.number().int().min(0).max(4).default(2),
  /** Whether its acylium ion (RCO⁺) is expected in positive mode. */
  acylium: z.boolean().default(false),
  /** Prior score of each occurrence (breaks evidence ties only). */
  prior: z.number().min(-5).max(5).default(0),
  source: Source,
});

/** A small neutral loss from any fragment (H2O, CO, CO2, CH3•…). */
export const SmallLossRuleSchema = z.object({
  name: Name,
  formula: FormulaString,
  /** A radical loss (CH3•) turns an even-electron ion into a radical ion. */
  radical: z.boolean().default(false),
  /** How many times it may repeat along one path. */
  maxRepeat: z.number().int().min(1).max(6).default(1),
  polarity: z.enum(['positive', 'negative', 'both']).default('both'),
  source: Source,
});

/** A cross-ring cleavage of a C-glycosidic sugar (Domon–Costello ⁰˒ʲX). */
export const CrossRingRuleSchema = z.object({
  name: Name,
  formula: FormulaString,
  residue: Name,
  /** Whether the same loss plus one water is also expected. */
  withWater: z.boolean().default(true),
  /** A key ion of a C-linked residue: a candidate with that residue C-linked is penalised when it is missing. */
  diagnostic: z.boolean().default(false),
  source: Source,
});

/** The neutral that an adduct ion loses in MS2 (HCOOH from [M+HCOO]⁻). */
export const AdductLossRuleSchema = z.object({
  ionType: z.string(),
  formula: FormulaString,
  name: Name,
  source: Source,
});

/** A library aglycone: a neutral formula, or a permanent cation such as a flavylium (`C15H11O6+`). */
export const AglyconeRuleSchema = z.object({
  name: Name,
  formula: FormulaString,
  class: z.string().min(1).max(80),
  source: Source,
});

/** Scoring weights (log-odds style); every key has a documented default. */
export const ScoringSchema = z
  .object({
    /** Score of an edge whose loss is a rule residue or acyl group. */
    knownLoss: z.number().default(3),
    /** Score of an edge whose loss is a rule small loss or cross-ring loss. */
    smallLoss: z.number().default(1.5),
    /** Score of an edge whose loss is chemically plausible but in no rule. */
    unknownLoss: z.number().default(-0.5),
    /** Score of an edge whose loss is implausible (negative RDBE, H only, huge). */
    implausibleLoss: z.number().default(-4),
    /** Prior cost of an aglycone in no library (an open-world reading needs more evidence). */
    unknownAglycone: z.number().min(0).default(1.5),
    /** Extra cost per N, S or P atom in an unknown aglycone (CHO aglycones are the rule among glycosides). */
    unknownHeteroatom: z.number().min(0).default(0.7),
    /** Weight of a peak's (log) relative intensity in its node score. */
    intensity: z.number().default(1),
    /** Weight of the mass-error term (Gaussian log-likelihood in units of the tolerance). */
    massError: z.number().default(1),
    /** Prior cost of an acyl group esterified to the aglycone itself rather than to a sugar. */
    acylOnAglycone: z.number().min(0).default(0.5),
    /** Prior cost of a C-glycosidic residue (O-glycosides are commoner when the evidence is equal). */
    cLinkage: z.number().min(0).default(0.3),
    /** Weight of the MS1 isotope envelope's agreement with the precursor formula, when one is given. */
    isotopeEnvelope: z.number().min(0).default(1),
    /** Penalty for each strong ion a candidate predicts that is missing. */
    missingIon: z.number().default(1.5),
    /** Minimum fraction of the spectrum's intensity a candidate must explain to be reported. */
    minExplained: z.number().min(0).max(1).default(0.5),
    /** A tie is declared when two candidates' scores differ by less than this. */
    tieMargin: z.number().min(0).default(0.05),
  })
  .prefault({});

/** Spectrum clean-up settings. */
export const CleanupSchema = z
  .object({
    /** Peaks below this fraction of the base peak are noise. */
    noiseRelative: z.number().min(0).max(1).default(0.005),
    /** Keep at most this many peaks (most intense first). */
    maxPeaks: z.number().int().min(5).max(1000).default(60),
    /** Fold ¹³C isotope peaks into their monoisotopic peak. */
    deisotope: z.boolean().default(true),
  })
  .prefault({});

/** Candidate enumeration limits. */
export const LimitsSchema = z
  .object({
    maxResidues: z.number().int().min(0).max(8).default(5),
    maxAcyls: z.number().int().min(0).max(4).default(2),
    /** Candidates reported per spectrum. */
    maxCandidates: z.number().int().min(1).max(100).default(10),
    /** Smallest RDBE of an unknown aglycone (phenolic aglycones have an aromatic ring: RDBE ≥ 4). */
    unknownAglyconeMinRdbe: z.number().min(0).max(30).default(3),
  })
  .prefault({});

/** Tolerances. */
export const TolerancesSchema = z
  .object({
    precursorPpm: z.number().positive().max(1000).default(5),
    fragmentPpm: z.number().positive().max(1000).default(10),
    /** Absolute floor of the fragment tolerance at low m/z, in Da. */
    fragmentFloorDa: z.number().min(0).max(1).default(0.002),
  })
  .prefault({});

/** A change-log entry. */
export const ChangelogEntrySchema = z.object({
  version: z.string(),
  date: z.string(),
  changes: z.array(z.string()).min(1),
});

/** A rule set: versioned data that drives the whole engine. */
export const RuleSetSchema = z.object({
  name: Name,
  version: z.string().regex(/^\d+\.\d+\.\d+(?:-[0-9A-Za-z.-]+)?$/, 'a semantic version such as 1.2.0'),
  description: z.string().optional(),
  changelog: z.array(ChangelogEntrySchema).default([]),
  tolerances: TolerancesSchema,
  /** Element ranges for formulas of unknown aglycones and of precursors outside the library. */
  elements: z.object({ aglycone: ElementRanges, precursor: ElementRanges }),
  ionTypes: z.object({
    positive: z.array(z.string()).min(1),
    negative: z.array(z.string()).min(1),
    /** Prior cost of reading a precursor as this ion type (metal adducts are less common than protonation). */
    penalties: z.record(z.string(), z.number().min(0).max(10)).default({}),
  }),
  residues: z.array(ResidueRuleSchema).min(1),
  acyls: z.array(AcylRuleSchema).default([]),
  smallLosses: z.array(SmallLossRuleSchema).default([]),
  crossRing: z.array(CrossRingRuleSchema).default([]),
  adductLosses: z.array(AdductLossRuleSchema).default([]),
  /** In negative mode, also expect the radical aglycone [Y0−H]⁻• (loss of the residue plus H•). */
  radicalAglycone: z.boolean().default(true),
  limits: LimitsSchema,
  cleanup: CleanupSchema,
  scoring: ScoringSchema,
  aglycones: z.array(AglyconeRuleSchema).min(1),
});

/** A rule set as written in its data file (before defaults). */
export type RuleSetInput = z.input<typeof RuleSetSchema>;
/** A validated rule set with defaults filled in. */
export type RuleSet = z.infer<typeof RuleSetSchema>;
export type ResidueRule = z.infer<typeof ResidueRuleSchema>;
export type AcylRule = z.infer<typeof AcylRuleSchema>;
export type SmallLossRule = z.infer<typeof SmallLossRuleSchema>;
export type CrossRingRule = z.infer<typeof CrossRingRuleSchema>;
export type AglyconeRule = z.infer<typeof AglyconeRuleSchema>;
