import { z } from 'zod';

/** One residue or acyl group of the truth, in the results contract's terms. */
export const TruthSubstituentSchema = z.object({
  residue: z.string(),
  linkage: z.enum(['O', 'C', 'ester']),
});

/** One sugar site of the truth: the aglycone position and the sugar tree there (simulator notation). */
export const TruthSiteSchema = z.object({
  position: z.string(),
  linkage: z.enum(['O', 'C']),
  tree: z.string(),
});

/** A peak of a simulated spectrum with what produced it. */
export const TruthPeakSchema = z.object({
  mz: z.number(),
  intensity: z.number(),
  formula: z.string().optional(),
  theoreticalMz: z.number().optional(),
  labels: z.array(z.string()),
  kinds: z.array(z.string()),
});

/**
 * The ground truth of one simulated spectrum. For glycosides: the aglycone (library name or `unknown`), the
 * formula of its Y0 ion in the precursor's adduct family ([A+H]⁺ for [M+H]⁺/[M+NH4]⁺/[M+2H]²⁺, [A+Na]⁺, [A+K]⁺,
 * the flavylium for [M]⁺, [A−H]⁻ for every negative type), the residues and acyl groups, the topology in the
 * simulator's position-free notation (see `canonicalTopology`) and the ion type. Decoys: `decoy: true` and
 * the expected answer "unassigned".
 */
export const SimTruthSchema = z.object({
  id: z.string(),
  simulated: z.literal(true),
  decoy: z.boolean(),
  decoyKind: z.enum(['peptide', 'lipid', 'aglycone-only', 'random']).optional(),
  description: z.string(),
  ionType: z.string(),
  charge: z.number().int(),
  polarity: z.enum(['positive', 'negative']),
  precursorFormula: z.string().optional(),
  precursorMz: z.number(),
  aglycone: z
    .object({
      name: z.string(),
      library: z.boolean(),
      class: z.string(),
      neutralFormula: z.string(),
      ionFormula: z.string(),
      modification: z.string().optional(),
    })
    .optional(),
  residues: z.array(TruthSubstituentSchema),
  acyls: z.array(z.string()),
  topology: z.string(),
  sites: z.array(TruthSiteSchema),
  cGlycoside: z.boolean(),
  coIsolated: z.string().optional(),
  lambdaGiven: z.boolean(),
  instrument: z
    .object({ systematicPpm: z.number(), resolution: z.number(), noisePeaks: z.number(), lowMz: z.number() })
    .optional(),
  peaks: z.array(TruthPeakSchema).optional(),
});

/** The truth file written beside a simulated set. */
export const SimTruthFileSchema = z.object({
  simulated: z.literal(true),
  note: z.string(),
  generator: z.string(),
  seed: z.union([z.number(), z.string()]),
  count: z.number().int(),
  truths: z.array(SimTruthSchema),
});

export type TruthSubstituent = z.infer<typeof TruthSubstituentSchema>;
export type SimTruth = z.infer<typeof SimTruthSchema>;
export type SimTruthFile = z.infer<typeof SimTruthFileSchema>;
