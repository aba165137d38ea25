import { z } from 'zod';
import { RuleSetRefSchema } from '../engine/report/result.js';

/** Where a batch is in its life. */
export const BatchStateSchema = z
  .enum(['receiving', 'queued', 'running', 'completed', 'failed', 'cancelled'])
  .describe(
    'receiving: upload in progress; queued/running: being scored; completed: every spectrum has a result; ' +
      'failed: finished, but some spectra could not be processed (their results say why); cancelled: stopped ' +
      'by the client (unscored spectra have error results with reason `cancelled`).',
  );

/** A candidate structure a user adds to a batch, in Peel's stacking notation. */
export const UserCandidateSchema = z.object({
  structure: z.string().min(1).max(500),
  name: z.string().min(1).max(200).optional(),
});

/** Facts about a batch that Peel keeps and hands back but does not interpret. */
export const BatchMetadataSchema = z
  .object({
    /** The LIMS's own sample ids for this batch. */
    sampleIds: z.array(z.string().min(1).max(200)).max(10_000).optional(),
    instrument: z.string().min(1).max(200).optional(),
    note: z.string().max(2000).optional(),
  })
  .catchall(z.union([z.string().max(2000), z.number().finite(), z.boolean()]));

/** Scoring options of a batch; anything unset comes from the rule set. */
export const BatchOptionsSchema = z.object({
  /** sha256 of a stored rule set (GET /v1/rulesets); the active one when unset. */
  ruleset: z
    .string()
    .regex(/^[0-9a-f]{64}$/, 'the sha256 of a stored rule set')
    .optional(),
  tolerance: z
    .object({
      fragmentPpm: z.number().positive().max(1000).optional(),
      precursorPpm: z.number().positive().max(1000).optional(),
    })
    .optional(),
  /** Extra candidate structures to score beside those the rules enumerate. */
  candidates: z.array(UserCandidateSchema).max(1000).optional(),
  metadata: BatchMetadataSchema.optional(),
});

/** Counts of spectra per state. */
export const BatchCountsSchema = z.object({
  pending: z.number().int().nonnegative(),
  annotated: z.number().int().nonnegative(),
  unassigned: z.number().int().nonnegative(),
  error: z.number().int().nonnegative(),
});

/** A batch as the API reports it. */
export const BatchStatusSchema = z.object({
  id: z.string(),
  state: BatchStateSchema,
  createdAt: z.string(),
  updatedAt: z.string(),
  finishedAt: z.string().nullable(),
  /** Spectra in the batch, including those that could not be read (they have error results). */
  total: z.number().int().nonnegative(),
  processed: z.number().int().nonnegative(),
  /** processed / total, 0..1. */
  progress: z.number().min(0).max(1),
  counts: BatchCountsSchema,
  source: z.object({ kind: z.enum(['json', 'mgf', 'mzml', 'reprocess']), filename: z.string().optional() }),
  readIssues: z.object({ errors: z.number().int(), warnings: z.number().int() }),
  ruleset: RuleSetRefSchema,
  options: BatchOptionsSchema.omit({ ruleset: true, metadata: true }),
  metadata: BatchMetadataSchema.optional(),
  reprocessOf: z.string().optional(),
  links: z.object({ self: z.string(), results: z.string() }),
});

/** One problem met while reading a batch's input. */
export const ReadIssueRecordSchema = z.object({
  code: z.string(),
  severity: z.enum(['error', 'warning']),
  message: z.string(),
  position: z.object({
    file: z.string().optional(),
    line: z.number().int().optional(),
    index: z.number().int().optional(),
    id: z.string().optional(),
    path: z.string().optional(),
  }),
});

/** One webhook delivery attempt. */
export const DeliveryRecordSchema = z.object({
  webhookId: z.string(),
  event: z.string(),
  attempt: z.number().int().positive(),
  at: z.string(),
  url: z.string(),
  ok: z.boolean(),
  status: z.number().int().nullable(),
  durationMs: z.number().nonnegative(),
  error: z.string().optional(),
});

export type BatchState = z.infer<typeof BatchStateSchema>;
export type BatchOptions = z.infer<typeof BatchOptionsSchema>;
export type BatchMetadata = z.infer<typeof BatchMetadataSchema>;
export type BatchStatus = z.infer<typeof BatchStatusSchema>;
export type BatchCounts = z.infer<typeof BatchCountsSchema>;
export type ReadIssueRecord = z.infer<typeof ReadIssueRecordSchema>;
export type DeliveryRecord = z.infer<typeof DeliveryRecordSchema>;
export type UserCandidate = z.infer<typeof UserCandidateSchema>;
