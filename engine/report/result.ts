import { z } from 'zod';

/** A peak the winning explanation accounts for, with its Domon–Costello (or other) label. */
export const MatchedPeakSchema = z.object({
  mz: z.number(),
  intensity: z.number().optional(),
  label: z.string(),
  formula: z.string(),
  ppm: z.number(),
});

/** One residue or acyl group of a candidate. */
export const SubstituentSchema = z.object({
  residue: z.string(),
  linkage: z.enum(['O', 'C', 'ester']),
});

/** A ranked candidate structure. */
export const CandidateResultSchema = z.object({
  rank: z.number().int().positive(),
  aglycone: z.object({
    name: z.string(),
    formula: z.string(),
    class: z.string().optional(),
    /** Other library aglycones whose ion has the same formula: the data cannot tell them apart. */
    alternatives: z.array(z.string()),
  }),
  substituents: z.array(SubstituentSchema),
  /** How residues are stacked, in Peel's stacking notation (docs/stacking-notation.md): the best-scoring stacking. */
  topology: z.string(),
  /**
   * Other stackings of the same aglycone and composition that also fit, best first with their scores (at most
   * four). The spectrum often cannot order them: Y ions fix what can be lost, not where it sat.
   */
  otherTopologies: z
    .array(
      z.object({
        topology: z.string(),
        score: z.number(),
        /** Whether the spectrum supports it as well as the best stacking (a tie the data cannot break). */
        tiedWithBest: z.boolean().optional(),
      }),
    )
    .optional(),
  /** Ion type of this reading of the precursor (same-formula alternatives may differ: [M]+ vs [M+H]+). */
  ionType: z.string().optional(),
  formula: z.string(),
  ppm: z.number(),
  explainedIntensity: z.number().min(0).max(1),
  score: z.number(),
  confidenceLevel: z.number().int().min(1).max(5),
  /** Whether this candidate scores the same as the one above it (a tie the data cannot break). */
  tiedWithPrevious: z.boolean().optional(),
  source: z.enum(['rules', 'user']).optional(),
  matchedPeaks: z.array(MatchedPeakSchema),
  notes: z.array(z.string()).optional(),
});

/** A node of the fragmentation tree: one peak explained by one formula. */
export const TreeNodeSchema = z.object({
  id: z.number().int(),
  mz: z.number(),
  formula: z.string(),
  intensity: z.number(),
  ppm: z.number(),
});

/** An edge of the fragmentation tree: parent loses `loss` to give child. */
export const TreeEdgeSchema = z.object({
  from: z.number().int(),
  to: z.number().int(),
  loss: z.string(),
  lossName: z.string().optional(),
  score: z.number(),
});

/** Why a spectrum ended unassigned or in error. */
export const ReasonSchema = z.object({ code: z.string(), message: z.string() });

/** The result for one spectrum (the results contract of DESIGN.md). */
export const SpectrumResultSchema = z.object({
  id: z.string(),
  index: z.number().int().nonnegative().optional(),
  /** Retention time in seconds, when the input gave one. */
  rt: z.number().optional(),
  status: z.enum(['annotated', 'unassigned', 'error']),
  reason: ReasonSchema.optional(),
  precursor: z
    .object({ mz: z.number(), charge: z.number().int(), ionType: z.string().nullable() })
    .optional(),
  candidates: z.array(CandidateResultSchema),
  tree: z
    .object({
      nodes: z.array(TreeNodeSchema),
      edges: z.array(TreeEdgeSchema),
      score: z.number().optional(),
      /** `exact` when the maximum colorful subtree was proven optimal; `heuristic` otherwise. */
      solver: z.enum(['exact', 'heuristic']).optional(),
    })
    .optional(),
  cautions: z.array(z.string()),
  metadata: z.record(z.string(), z.unknown()).optional(),
});

/** Identifies the rule set a result was scored with. */
export const RuleSetRefSchema = z.object({ name: z.string(), version: z.string(), sha256: z.string() });

/** A whole results document (`--format json`). */
export const ResultsDocumentSchema = z.object({
  ruleset: RuleSetRefSchema,
  disclaimer: z.string().optional(),
  spectra: z.array(SpectrumResultSchema),
});

export type MatchedPeak = z.infer<typeof MatchedPeakSchema>;
export type Substituent = z.infer<typeof SubstituentSchema>;
export type CandidateResult = z.infer<typeof CandidateResultSchema>;
export type TreeNode = z.infer<typeof TreeNodeSchema>;
export type TreeEdge = z.infer<typeof TreeEdgeSchema>;
export type SpectrumResult = z.infer<typeof SpectrumResultSchema>;
export type RuleSetRef = z.infer<typeof RuleSetRefSchema>;
export type ResultsDocument = z.infer<typeof ResultsDocumentSchema>;

/** Said in every results document: what MS/MS can and cannot establish. */
export const DISCLAIMER =
  'Putative identifications from MS/MS alone. Stereoisomeric sugars (e.g. glucose vs galactose, xylose vs ' +
  'arabinose) and linkage positions are not distinguished; candidates with identical formulas are reported ' +
  'as ties; confidence level 1 requires a reference standard.';
