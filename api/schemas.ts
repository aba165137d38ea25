import { z } from 'zod';
import { RuleSetRefSchema, SpectrumResultSchema } from '../engine/report/result.js';
import { SpectrumSchema } from '../engine/spectrum/spectrum.js';
import { BatchMetadataSchema, BatchOptionsSchema, BatchStatusSchema } from '../store/schemas.js';

/** JSON batch submission: the engine's spectrum schema for each spectrum, plus the batch options. */
export const SubmitBatchSchema = BatchOptionsSchema.extend({
  spectra: z.array(SpectrumSchema).min(1),
});

/**
 * The envelope actually parsed: each spectrum is then checked on its own with {@link SpectrumSchema}, so one
 * invalid spectrum becomes an error result instead of rejecting the batch.
 */
export const SubmitEnvelopeSchema = BatchOptionsSchema.extend({
  spectra: z.array(z.unknown()).min(1, 'at least one spectrum'),
}).strict();

/** Options of a raw or multipart upload given as query parameters. */
export const UploadQuerySchema = z.object({
  format: z.enum(['mgf', 'mzml', 'json']).optional(),
  filename: z.string().min(1).max(256).optional(),
  ruleset: z.string().optional(),
  fragmentPpm: z.coerce.number().optional(),
  precursorPpm: z.coerce.number().optional(),
  instrument: z.string().optional(),
  sampleId: z.union([z.string(), z.array(z.string())]).optional(),
});

/** Cursor pagination of the batch list. */
export const ListQuerySchema = z.object({
  limit: z.coerce.number().int().min(1).max(200).default(50),
  before: z.string().max(64).optional(),
});

/** The result formats and their query names. */
export const ResultsFormatSchema = z.enum(['json', 'ndjson', 'csv', 'mztab']);

/** Filters and pagination of results. */
export const ResultsQuerySchema = z.object({
  format: ResultsFormatSchema.optional(),
  /** Comma-separated statuses to keep. */
  status: z
    .string()
    .regex(
      /^(annotated|unassigned|error)(,(annotated|unassigned|error))*$/,
      'comma-separated annotated, unassigned, error',
    )
    .optional(),
  /** Keep spectra whose best candidate has this confidence level or better (1 is best). */
  maxConfidenceLevel: z.coerce.number().int().min(1).max(5).optional(),
  /** Index to start from (the `next` of the previous page). */
  cursor: z.coerce.number().int().min(0).default(0),
  /** Page size; without it the whole batch (from `cursor`) is returned. */
  limit: z.coerce.number().int().min(1).max(5000).optional(),
});

/** A page of batches. */
export const BatchListSchema = z.object({ batches: z.array(BatchStatusSchema), next: z.string().nullable() });

/** Results as JSON (the results contract, with the batch it belongs to and paging). */
export const ResultsPageSchema = z.object({
  ruleset: RuleSetRefSchema,
  disclaimer: z.string().optional(),
  batch: z.object({ id: z.string(), state: BatchStatusSchema.shape.state }),
  spectra: z.array(SpectrumResultSchema),
  page: z.object({ cursor: z.number().int(), next: z.number().int().nullable() }).optional(),
});

/** Registering a webhook endpoint. */
export const WebhookInputSchema = z
  .object({
    url: z.url({ protocol: /^https?$/ }).max(2000),
    /** Replace the signing secret with a new one. */
    rotateSecret: z.boolean().optional(),
  })
  .strict();

/** A webhook endpoint as returned to its owner (with the signing secret). */
export const WebhookEndpointSchema = z.object({
  url: z.string(),
  secret: z.string().describe('Standard Webhooks signing secret (whsec_ + base64)'),
  createdAt: z.string(),
});

/** A stored rule set's summary. */
export const RuleSetSummarySchema = RuleSetRefSchema.extend({
  storedAt: z.string(),
  description: z.string().optional(),
});

/** The list of stored rule sets. */
export const RuleSetListSchema = z.object({
  active: z.string().nullable(),
  rulesets: z.array(RuleSetSummarySchema),
});

/** Reprocessing a batch with another rule set (admin). */
export const ReprocessSchema = z
  .object({
    ruleset: BatchOptionsSchema.shape.ruleset,
    tolerance: BatchOptionsSchema.shape.tolerance,
    metadata: BatchMetadataSchema.optional(),
  })
  .strict();

/** What changed between a batch and the batch it reprocessed. */
export const ChangeReportSchema = z.object({
  batch: z.string(),
  reprocessOf: z.string(),
  from: RuleSetRefSchema,
  to: RuleSetRefSchema,
  total: z.number().int(),
  changed: z.number().int(),
  changes: z.array(
    z.object({
      index: z.number().int(),
      id: z.string(),
      before: z.object({
        status: z.string(),
        best: z.string().nullable(),
        confidenceLevel: z.number().nullable(),
      }),
      after: z.object({
        status: z.string(),
        best: z.string().nullable(),
        confidenceLevel: z.number().nullable(),
      }),
    }),
  ),
});

/** RFC 9457 problem details. */
export const ProblemSchema = z.object({
  type: z.string(),
  title: z.string(),
  status: z.number().int(),
  detail: z.string(),
  instance: z.string(),
  code: z.string(),
  requestId: z.string().optional(),
  errors: z
    .array(
      z.object({
        pointer: z.string().optional(),
        detail: z.string(),
        code: z.string().optional(),
        line: z.number().int().optional(),
        index: z.number().int().optional(),
      }),
    )
    .optional(),
});
