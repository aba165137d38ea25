import { z } from 'zod';
import { ResultsDocumentSchema, SpectrumResultSchema } from '../engine/report/result.js';
import { RuleSetSchema } from '../engine/rules/schema.js';
import { SpectrumSchema } from '../engine/spectrum/spectrum.js';
import {
  BatchOptionsSchema,
  BatchStatusSchema,
  DeliveryRecordSchema,
  ReadIssueRecordSchema,
} from '../store/schemas.js';
import {
  BatchListSchema,
  ChangeReportSchema,
  ProblemSchema,
  ReprocessSchema,
  ResultsPageSchema,
  RuleSetListSchema,
  RuleSetSummarySchema,
  SubmitBatchSchema,
  WebhookEndpointSchema,
  WebhookInputSchema,
} from './schemas.js';

/** The named schemas of the document: each generated from the zod schema the code validates with. */
const COMPONENTS: Record<string, [z.ZodType, 'input' | 'output']> = {
  Spectrum: [SpectrumSchema, 'input'],
  SubmitBatch: [SubmitBatchSchema, 'input'],
  BatchOptions: [BatchOptionsSchema, 'input'],
  BatchStatus: [BatchStatusSchema, 'output'],
  BatchList: [BatchListSchema, 'output'],
  SpectrumResult: [SpectrumResultSchema, 'output'],
  ResultsDocument: [ResultsDocumentSchema, 'output'],
  ResultsPage: [ResultsPageSchema, 'output'],
  ReadIssue: [ReadIssueRecordSchema, 'output'],
  WebhookDelivery: [DeliveryRecordSchema, 'output'],
  WebhookInput: [WebhookInputSchema, 'input'],
  WebhookEndpoint: [WebhookEndpointSchema, 'output'],
  RuleSet: [RuleSetSchema, 'input'],
  RuleSetSummary: [RuleSetSummarySchema, 'output'],
  RuleSetList: [RuleSetListSchema, 'output'],
  Reprocess: [ReprocessSchema, 'input'],
  ChangeReport: [ChangeReportSchema, 'output'],
  Problem: [ProblemSchema, 'output'],
};

const ref = (name: keyof typeof COMPONENTS) => ({ $ref: `#/components/schemas/${name}` });
const json = (name: keyof typeof COMPONENTS) => ({ 'application/json': { schema: ref(name) } });
const problem = (description: string) => ({
  description,
  content: { 'application/problem+json': { schema: ref('Problem') } },
});

const ERRORS = {
  '401': problem('Missing or invalid API key'),
  '429': problem('Rate limit exceeded'),
  '503': problem('Redis unreachable'),
};
const batchId = {
  name: 'id',
  in: 'path',
  required: true,
  schema: { type: 'string' },
  description: 'Batch id',
};
const q = (name: string, schema: object, description: string) => ({
  name,
  in: 'query',
  required: false,
  schema,
  description,
});

/** Builds the OpenAPI 3.1 document of the API. */
export function openApiDocument(version: string): Record<string, unknown> {
  const schemas: Record<string, unknown> = {};
  for (const [name, [schema, io]] of Object.entries(COMPONENTS)) {
    const s = z.toJSONSchema(schema, { target: 'draft-2020-12', io, unrepresentable: 'any' }) as Record<
      string,
      unknown
    >;
    delete s.$schema;
    schemas[name] = s;
  }
  const uploadOptions = [
    q(
      'format',
      { type: 'string', enum: ['mgf', 'mzml', 'json'] },
      'Input format (else from the file name or content)',
    ),
    q('filename', { type: 'string' }, 'File name recorded with the batch'),
    q(
      'ruleset',
      { type: 'string', pattern: '^[0-9a-f]{64}$' },
      'sha256 of a stored rule set (else the active one)',
    ),
    q('fragmentPpm', { type: 'number' }, 'Fragment tolerance, ppm'),
    q('precursorPpm', { type: 'number' }, 'Precursor tolerance, ppm'),
    q('instrument', { type: 'string' }, 'Instrument name kept with the batch'),
    q('sampleId', { type: 'array', items: { type: 'string' } }, 'External sample id (repeatable)'),
  ];
  return {
    openapi: '3.1.0',
    info: {
      title: 'Peel API',
      version,
      summary: 'Rule-based fragmentation-tree scoring of glycosylated natural products in MS/MS spectra',
      description:
        'Submit batches of MS2 spectra, poll them, fetch ranked putative identifications. Results are putative: ' +
        'MS/MS cannot tell stereoisomeric sugars apart, identical formulas are reported as ties, and confidence ' +
        'level 1 needs a reference standard. Every error is RFC 9457 problem details.',
    },
    servers: [{ url: '/' }],
    security: [{ bearer: [] }],
    components: {
      securitySchemes: { bearer: { type: 'http', scheme: 'bearer', description: 'API key' } },
      schemas,
    },
    paths: {
      '/v1/batches': {
        post: {
          operationId: 'submitBatch',
          summary: 'Submit a batch: JSON spectra, a multipart upload (MGF, mzML, JSON), or a raw file body',
          parameters: [
            {
              name: 'Idempotency-Key',
              in: 'header',
              required: false,
              schema: { type: 'string', maxLength: 255 },
              description:
                'Same key + same body replays the first response; other body → 422; still running → 409',
            },
            ...uploadOptions,
          ],
          requestBody: {
            required: true,
            content: {
              'application/json': { schema: ref('SubmitBatch') },
              'multipart/form-data': {
                schema: {
                  type: 'object',
                  required: ['file'],
                  properties: {
                    options: {
                      type: 'string',
                      description: 'BatchOptions as JSON; must come before the file part',
                    },
                    file: { type: 'string', contentMediaType: 'application/octet-stream' },
                  },
                },
              },
              'application/x-mgf': { schema: { type: 'string' } },
              'application/mzml+xml': { schema: { type: 'string' } },
              'application/octet-stream': {
                schema: { type: 'string', contentMediaType: 'application/octet-stream' },
              },
            },
          },
          responses: {
            '202': {
              description: 'Accepted; poll the Location',
              headers: { Location: { schema: { type: 'string' } } },
              content: json('BatchStatus'),
            },
            '400': problem('Malformed body or header'),
            '409': problem('The first request with this Idempotency-Key is still running'),
            '413': problem('Body, file or spectrum count too large'),
            '415': problem('Unsupported content type'),
            '422': problem('Invalid options, unknown rule set, nothing readable, or Idempotency-Key reused'),
            ...ERRORS,
          },
        },
        get: {
          operationId: 'listBatches',
          summary: "The caller's batches, newest first",
          parameters: [
            q('limit', { type: 'integer', minimum: 1, maximum: 200, default: 50 }, 'Page size'),
            q('before', { type: 'string' }, 'The `next` of the previous page'),
          ],
          responses: {
            '200': { description: 'A page', content: json('BatchList') },
            '422': problem('Bad query'),
            ...ERRORS,
          },
        },
      },
      '/v1/batches/{id}': {
        get: {
          operationId: 'getBatch',
          summary: 'Batch status, counts per state and progress',
          parameters: [batchId],
          responses: {
            '200': { description: 'Status', content: json('BatchStatus') },
            '404': problem('No such batch'),
            ...ERRORS,
          },
        },
      },
      '/v1/batches/{id}/cancel': {
        post: {
          operationId: 'cancelBatch',
          summary: 'Cancel a batch: unscored spectra get error results with reason `cancelled`',
          parameters: [batchId],
          responses: {
            '200': { description: 'Cancelled', content: json('BatchStatus') },
            '404': problem('No such batch'),
            '409': problem('Already finished'),
            ...ERRORS,
          },
        },
      },
      '/v1/batches/{id}/results': {
        get: {
          operationId: 'getResults',
          summary: 'Results: JSON (whole or paged), NDJSON (streamed), CSV or mzTab-M, by Accept or ?format=',
          parameters: [
            batchId,
            q('format', { type: 'string', enum: ['json', 'ndjson', 'csv', 'mztab'] }, 'Overrides Accept'),
            q(
              'status',
              { type: 'string' },
              'Comma-separated statuses to keep (annotated, unassigned, error)',
            ),
            q(
              'maxConfidenceLevel',
              { type: 'integer', minimum: 1, maximum: 5 },
              'Best candidate at this level or better',
            ),
            q('cursor', { type: 'integer', minimum: 0 }, 'Index to start from'),
            q('limit', { type: 'integer', minimum: 1, maximum: 5000 }, 'Page size (JSON: adds `page.next`)'),
          ],
          responses: {
            '200': {
              description: 'Results',
              content: {
                'application/json': { schema: { oneOf: [ref('ResultsDocument'), ref('ResultsPage')] } },
                'application/x-ndjson': { schema: { type: 'string' } },
                'text/csv': { schema: { type: 'string' } },
                'text/tab-separated-values': { schema: { type: 'string' } },
              },
            },
            '404': problem('No such batch'),
            '406': problem('No acceptable format'),
            ...ERRORS,
          },
        },
      },
      '/v1/batches/{id}/results/{index}': {
        get: {
          operationId: 'getSpectrumResult',
          summary: "One spectrum's result with its fragmentation tree",
          parameters: [
            batchId,
            { name: 'index', in: 'path', required: true, schema: { type: 'integer', minimum: 0 } },
          ],
          responses: {
            '200': { description: 'Result', content: json('SpectrumResult') },
            '404': problem('No such batch, index, or not scored yet'),
            ...ERRORS,
          },
        },
      },
      '/v1/batches/{id}/issues': {
        get: {
          operationId: 'getReadIssues',
          summary: 'Problems met while reading the input (errors and warnings, with positions)',
          parameters: [
            batchId,
            q('offset', { type: 'integer', minimum: 0 }, 'Skip'),
            q('limit', { type: 'integer' }, 'Count'),
          ],
          responses: {
            '200': {
              description: 'Issues',
              content: {
                'application/json': {
                  schema: {
                    type: 'object',
                    properties: {
                      batch: { type: 'string' },
                      issues: { type: 'array', items: ref('ReadIssue') },
                    },
                  },
                },
              },
            },
            '404': problem('No such batch'),
            ...ERRORS,
          },
        },
      },
      '/v1/batches/{id}/webhook-deliveries': {
        get: {
          operationId: 'getWebhookDeliveries',
          summary: "The batch's webhook delivery log",
          parameters: [batchId],
          responses: {
            '200': {
              description: 'Attempts, oldest first',
              content: {
                'application/json': {
                  schema: {
                    type: 'object',
                    properties: {
                      batch: { type: 'string' },
                      deliveries: { type: 'array', items: ref('WebhookDelivery') },
                    },
                  },
                },
              },
            },
            '404': problem('No such batch'),
            ...ERRORS,
          },
        },
      },
      '/v1/batches/{id}/reprocess': {
        post: {
          operationId: 'reprocessBatch',
          summary: "Admin: re-score a batch's stored spectra with another rule set, as a new batch",
          parameters: [batchId],
          requestBody: { required: false, content: json('Reprocess') },
          responses: {
            '202': { description: 'The new batch', content: json('BatchStatus') },
            '403': problem('Not an admin'),
            '404': problem('No such batch'),
            '422': problem('Unknown rule set'),
            ...ERRORS,
          },
        },
      },
      '/v1/batches/{id}/changes': {
        get: {
          operationId: 'getChanges',
          summary: 'What changed between a reprocessed batch and its original',
          parameters: [batchId],
          responses: {
            '200': { description: 'Changes', content: json('ChangeReport') },
            '404': problem('No such batch'),
            ...ERRORS,
          },
        },
      },
      '/v1/webhook': {
        put: {
          operationId: 'setWebhook',
          summary: "Register the caller's webhook endpoint (returns the signing secret)",
          requestBody: { required: true, content: json('WebhookInput') },
          responses: {
            '200': { description: 'Endpoint', content: json('WebhookEndpoint') },
            '422': problem('Bad URL'),
            ...ERRORS,
          },
        },
        get: {
          operationId: 'getWebhook',
          summary: "The caller's webhook endpoint",
          responses: {
            '200': { description: 'Endpoint', content: json('WebhookEndpoint') },
            '404': problem('None'),
            ...ERRORS,
          },
        },
        delete: {
          operationId: 'deleteWebhook',
          summary: "Remove the caller's webhook endpoint",
          responses: { '204': { description: 'Removed' }, '404': problem('None'), ...ERRORS },
        },
      },
      '/v1/rulesets': {
        get: {
          operationId: 'listRuleSets',
          summary: 'Stored rule sets and the active one',
          responses: { '200': { description: 'Rule sets', content: json('RuleSetList') }, ...ERRORS },
        },
        post: {
          operationId: 'uploadRuleSet',
          summary: 'Admin: store a rule set (YAML or JSON); ?activate=true makes it active',
          parameters: [q('activate', { type: 'boolean' }, 'Activate at once')],
          requestBody: {
            required: true,
            content: {
              'application/json': { schema: ref('RuleSet') },
              'application/yaml': { schema: { type: 'string' } },
            },
          },
          responses: {
            '201': { description: 'Stored', content: json('RuleSetSummary') },
            '403': problem('Not an admin'),
            '413': problem('Too large'),
            '422': problem('Invalid rule set, with the position of each problem'),
            ...ERRORS,
          },
        },
      },
      '/v1/rulesets/{sha256}': {
        get: {
          operationId: 'getRuleSet',
          summary: 'A stored rule set',
          parameters: [{ name: 'sha256', in: 'path', required: true, schema: { type: 'string' } }],
          responses: {
            '200': { description: 'Rule set', content: json('RuleSet') },
            '404': problem('None'),
            ...ERRORS,
          },
        },
      },
      '/v1/rulesets/{sha256}/activate': {
        post: {
          operationId: 'activateRuleSet',
          summary: 'Admin: make a stored rule set the active one',
          parameters: [{ name: 'sha256', in: 'path', required: true, schema: { type: 'string' } }],
          responses: {
            '200': { description: 'Rule sets', content: json('RuleSetList') },
            '403': problem('Not an admin'),
            '404': problem('None'),
            ...ERRORS,
          },
        },
      },
      '/livez': {
        get: {
          operationId: 'livez',
          security: [],
          summary: 'Process is alive',
          responses: { '200': { description: 'OK' } },
        },
      },
      '/readyz': {
        get: {
          operationId: 'readyz',
          security: [],
          summary: 'Redis reachable',
          responses: { '200': { description: 'Ready' }, '503': problem('Not ready') },
        },
      },
      '/metrics': {
        get: {
          operationId: 'metrics',
          security: [],
          summary: 'Prometheus metrics',
          responses: {
            '200': {
              description: 'Text exposition format',
              content: { 'text/plain': { schema: { type: 'string' } } },
            },
          },
        },
      },
      '/openapi.json': {
        get: {
          operationId: 'openapi',
          security: [],
          summary: 'This document',
          responses: {
            '200': {
              description: 'OpenAPI 3.1',
              content: { 'application/json': { schema: { type: 'object' } } },
            },
          },
        },
      },
    },
  };
}
