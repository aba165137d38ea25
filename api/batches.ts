import { createHash } from 'node:crypto';
import type { Readable } from 'node:stream';
import express, { type Request, type Response, Router } from 'express';
import { z } from 'zod';
import { SpectrumSchema } from '../engine/spectrum/spectrum.js';
import { formatFromName, isGzip, readSpectra, sniffFormat } from '../formats/detect.js';
import type { ReadItem } from '../formats/read-types.js';
import { sha256Hex } from '../store/hash.js';
import { type BatchOptions, BatchOptionsSchema, type BatchStatus } from '../store/schemas.js';
import { type BatchRecord, isBatchId, isTerminal } from '../store/store.js';
import { chunkJobId } from '../worker/queues.js';
import { errorResult } from '../worker/score-processor.js';
import { enqueueBatchEvent } from '../worker/webhooks.js';
import { principal, requireAdmin } from './auth.js';
import type { AppContext } from './context.js';
import { ApiError, validationError, zodProblems } from './errors.js';
import { ingestBatch, resolveRuleSet } from './ingest.js';
import { ListQuerySchema, ReprocessSchema, SubmitEnvelopeSchema, UploadQuerySchema } from './schemas.js';
import { RAW_TYPES, receiveMultipart, receiveRaw, type Upload } from './upload.js';

/** The status view of a stored batch. */
export function batchView(b: BatchRecord): BatchStatus {
  const pending = Math.max(0, b.total - b.processed);
  return {
    id: b.id,
    state: b.state,
    createdAt: b.createdAt,
    updatedAt: b.updatedAt,
    finishedAt: b.finishedAt,
    total: b.total,
    processed: b.processed,
    progress: b.total > 0 ? Math.min(1, b.processed / b.total) : 0,
    counts: { pending, ...b.counts },
    source: b.source,
    readIssues: b.readIssues,
    ruleset: b.ruleset,
    options: b.options,
    ...(b.metadata ? { metadata: b.metadata } : {}),
    ...(b.reprocessOf ? { reprocessOf: b.reprocessOf } : {}),
    links: { self: `/v1/batches/${b.id}`, results: `/v1/batches/${b.id}/results` },
  };
}

/** A batch of the calling client, else a 404 (also for another client's batch: its existence is not revealed). */
export async function ownBatch(ctx: AppContext, req: Request, id: string): Promise<BatchRecord> {
  const b = isBatchId(id) ? await ctx.store.getBatch(id) : null;
  if (!b || b.clientId !== principal(req).clientId) throw new ApiError('not-found', `no batch ${id}`);
  return b;
}

interface Reply {
  status: number;
  headers: Record<string, string>;
  body: string;
}

const IssuesQuerySchema = z.object({
  offset: z.coerce.number().int().min(0).default(0),
  limit: z.coerce.number().int().min(1).max(1000).default(100),
});

const IDEMPOTENCY_KEY = /^[\x21-\x7e]{1,255}$/;

/**
 * Runs a submission under the Idempotency-Key protocol (IETF httpapi draft): the first request with a key
 * runs and its 2xx reply is stored; the same key with the same request replays it; with another request
 * it is a 422; while the first is running, a 409. A failed first request frees the key.
 */
async function idempotent(
  ctx: AppContext,
  req: Request,
  res: Response,
  run: () => Promise<Reply & { fingerprint: string }>,
  fingerprintOnly: () => Promise<string>,
): Promise<void> {
  const raw = req.get('idempotency-key');
  const send = (r: Reply, replayed = false) => {
    res.status(r.status).set(r.headers);
    if (replayed) res.set('Idempotent-Replayed', 'true');
    res.type('application/json').send(r.body);
  };
  if (raw === undefined) {
    send(await run());
    return;
  }
  const key = raw.replace(/^"|"$/g, '');
  if (!IDEMPOTENCY_KEY.test(key)) {
    throw new ApiError('bad-idempotency-key', 'Idempotency-Key must be 1–255 visible ASCII characters');
  }
  const clientId = principal(req).clientId;
  const keyId = sha256Hex(key);
  const existing = await ctx.store.claimIdempotencyKey(clientId, keyId, 600);
  if (existing?.state === 'in-flight') {
    throw new ApiError(
      'idempotency-key-in-flight',
      'the first request with this key has not finished; retry later',
      {
        headers: { 'Retry-After': '1' },
      },
    );
  }
  if (existing?.state === 'done') {
    const fp = await fingerprintOnly();
    if (fp !== existing.fingerprint) {
      throw new ApiError(
        'idempotency-key-reused',
        'this Idempotency-Key was used with a different request body',
      );
    }
    send(existing, true);
    return;
  }
  let reply: Reply & { fingerprint: string };
  try {
    reply = await run();
  } catch (err) {
    await ctx.store.releaseIdempotencyKey(clientId, keyId).catch(() => {});
    throw err;
  }
  await ctx.store.completeIdempotencyKey(
    clientId,
    keyId,
    {
      state: 'done',
      fingerprint: reply.fingerprint,
      status: reply.status,
      headers: reply.headers,
      body: reply.body,
    },
    ctx.limits.idempotencyTtlSeconds,
  );
  send(reply);
}

function accepted(b: BatchRecord, fingerprint: string): Reply & { fingerprint: string } {
  const view = batchView(b);
  return {
    status: 202,
    headers: { Location: view.links.self },
    body: JSON.stringify(view),
    fingerprint,
  };
}

/** Spectra of a JSON body, each checked on its own: invalid ones become error items with JSON pointers. */
async function* jsonItems(spectra: unknown[]): AsyncGenerator<ReadItem> {
  for (let i = 0; i < spectra.length; i++) {
    const raw = spectra[i];
    const r = SpectrumSchema.safeParse(raw);
    if (r.success) {
      yield { kind: 'spectrum', index: i, spectrum: r.data, warnings: [] };
    } else {
      const id =
        raw && typeof raw === 'object' && typeof (raw as { id?: unknown }).id === 'string'
          ? ((raw as { id: string }).id as string)
          : undefined;
      const first = zodProblems(r.error, ['spectra', i])[0]!;
      yield {
        kind: 'error',
        index: i,
        ...(id ? { id } : {}),
        issue: {
          code: 'invalid-spectrum',
          severity: 'error',
          message: `${first.pointer}: ${first.detail}`,
          position: { index: i, path: first.pointer!, ...(id ? { id } : {}) },
        },
      };
    }
  }
}

/** Batch options from the query string (raw uploads) merged under an `options` form field (multipart). */
function uploadOptions(
  req: Request,
  optionsField: string | undefined,
): { options: BatchOptions; q: Record<string, unknown> } {
  const q = UploadQuerySchema.safeParse(req.query);
  if (!q.success) throw validationError(q.error, 'invalid query parameters', ['query']);
  const fromQuery: Record<string, unknown> = {
    ...(q.data.ruleset ? { ruleset: q.data.ruleset } : {}),
    ...(q.data.fragmentPpm !== undefined || q.data.precursorPpm !== undefined
      ? {
          tolerance: {
            ...(q.data.fragmentPpm !== undefined ? { fragmentPpm: q.data.fragmentPpm } : {}),
            ...(q.data.precursorPpm !== undefined ? { precursorPpm: q.data.precursorPpm } : {}),
          },
        }
      : {}),
    ...(q.data.instrument || q.data.sampleId
      ? {
          metadata: {
            ...(q.data.instrument ? { instrument: q.data.instrument } : {}),
            ...(q.data.sampleId ? { sampleIds: [q.data.sampleId].flat() } : {}),
          },
        }
      : {}),
  };
  let fromField: unknown = {};
  if (optionsField !== undefined) {
    try {
      fromField = JSON.parse(optionsField);
    } catch {
      throw new ApiError('malformed-json', 'the "options" form field is not valid JSON', {
        errors: [{ pointer: '/options', detail: 'not JSON' }],
      });
    }
  }
  const merged = { ...fromQuery, ...(fromField as object) };
  const r = BatchOptionsSchema.strict().safeParse(merged);
  if (!r.success) throw validationError(r.error, 'invalid batch options');
  return { options: r.data, q: q.data };
}

/** The batch routes: submit, list, status, cancel, read issues, webhook deliveries, reprocess. */
export function batchRoutes(ctx: AppContext): Router {
  const r = Router();
  const ingestDeps = {
    store: ctx.store,
    scoreQueue: ctx.scoreQueue,
    chunkSize: ctx.limits.chunkSize,
    maxSpectra: ctx.limits.maxBatchSpectra,
    ...(ctx.metrics ? { metrics: ctx.metrics } : {}),
  };
  const jsonBody = express.json({
    limit: ctx.limits.jsonBody,
    verify: (req, _res, buf) => {
      (req as Request & { rawSha256?: string }).rawSha256 = createHash('sha256').update(buf).digest('hex');
    },
  });

  r.post('/batches', (req, res, next) => {
    if (req.is('application/json')) jsonBody(req, res, next);
    else next();
  });

  r.post('/batches', async (req, res) => {
    const clientId = principal(req).clientId;
    const route = `POST ${req.path}?${new URLSearchParams(req.query as Record<string, string>).toString()}`;
    if (req.is('application/json')) {
      const fingerprint = sha256Hex(`${route}\n${(req as Request & { rawSha256?: string }).rawSha256 ?? ''}`);
      await idempotent(
        ctx,
        req,
        res,
        async () => {
          const env = SubmitEnvelopeSchema.safeParse(req.body);
          if (!env.success) throw validationError(env.error, 'the batch body is not valid');
          const { spectra, ...options } = env.data;
          const ruleset = await resolveRuleSet(ctx.store, options.ruleset);
          const b = await ingestBatch(
            ingestDeps,
            { clientId, options, source: { kind: 'json' }, items: jsonItems(spectra) },
            ruleset,
          );
          return accepted(b, fingerprint);
        },
        async () => fingerprint,
      );
      return;
    }

    const multipart = req.is('multipart/form-data');
    const mime = (req.get('content-type') ?? '').split(';')[0]!.trim().toLowerCase();
    if (!multipart && !(mime in RAW_TYPES)) {
      throw new ApiError(
        'unsupported-media-type',
        'send application/json, multipart/form-data (a "file" part), or a raw MGF/mzML body ' +
          `(${Object.keys(RAW_TYPES).join(', ')})`,
      );
    }
    let upload: Upload | undefined;
    const receive = async () => {
      upload ??= multipart
        ? await receiveMultipart(req, ctx.limits.uploadBody, route)
        : receiveRaw(req, ctx.limits.uploadBody, route);
      return upload;
    };
    await idempotent(
      ctx,
      req,
      res,
      async () => {
        const u = await receive();
        const { options, q } = uploadOptions(req, u.fields.options);
        const ruleset = await resolveRuleSet(ctx.store, options.ruleset);
        const filename = (q.filename as string | undefined) ?? u.filename;
        const declared = (q.format as Format | undefined) ?? RAW_TYPES[u.mimeType];
        const sniffed = await sniffStream(u.stream);
        const items = readSpectra(sniffed.chunks, {
          ...(declared ? { format: declared } : {}),
          ...(filename ? { file: filename } : {}),
        });
        const kind = declared ?? (filename ? formatFromName(filename) : undefined) ?? sniffed.format ?? 'mgf';
        const b = await ingestBatch(
          ingestDeps,
          { clientId, options, source: { kind, ...(filename ? { filename } : {}) }, items },
          ruleset,
        );
        return accepted(b, u.digest());
      },
      async () => {
        const u = await receive();
        for await (const _ of u.stream) {
          // Read to the end: the fingerprint covers the whole body.
        }
        return u.digest();
      },
    );
  });

  r.get('/batches', async (req, res) => {
    const q = ListQuerySchema.safeParse(req.query);
    if (!q.success) throw validationError(q.error, 'invalid query parameters', ['query']);
    const { ids, next } = await ctx.store.listBatches(principal(req).clientId, q.data.limit, q.data.before);
    const batches = (await Promise.all(ids.map((id) => ctx.store.getBatch(id)))).filter(
      (b): b is BatchRecord => !!b,
    );
    res.json({ batches: batches.map(batchView), next });
  });

  r.get('/batches/:id', async (req, res) => {
    res.json(batchView(await ownBatch(ctx, req, req.params.id)));
  });

  r.post('/batches/:id/cancel', async (req, res) => {
    const b = await ownBatch(ctx, req, req.params.id);
    if (isTerminal(b.state)) {
      throw new ApiError('batch-finished', `batch ${b.id} is already ${b.state}`);
    }
    const state = await ctx.store.cancelBatch(b.id);
    if (state === 'cancelled') {
      // Drop jobs not yet started; running ones see the state and stop, results stay write-once.
      const chunks = Math.ceil(b.total / ctx.limits.chunkSize);
      await Promise.all(
        Array.from({ length: chunks }, (_, k) => ctx.scoreQueue.remove(chunkJobId(b.id, k)).catch(() => 0)),
      );
      for (let start = 0; start < b.total; start += 1000) {
        const items = await ctx.store.getItems(b.id, start, Math.min(b.total, start + 1000) - 1);
        await ctx.store.markResults(
          b.id,
          items.map((i) => ({
            index: i.index,
            result: {
              ...errorResult(i.id, 'cancelled', 'the batch was cancelled before this spectrum was scored'),
              index: i.index,
            },
          })),
        );
      }
      await enqueueBatchEvent(ctx.store, ctx.webhookQueue, b.id);
    }
    res.json(batchView((await ctx.store.getBatch(b.id))!));
  });

  r.get('/batches/:id/issues', async (req, res) => {
    const b = await ownBatch(ctx, req, req.params.id);
    const q = IssuesQuerySchema.safeParse(req.query);
    if (!q.success) throw validationError(q.error, 'invalid query parameters', ['query']);
    res.json({
      batch: b.id,
      readIssues: b.readIssues,
      issues: await ctx.store.listIssues(b.id, q.data.offset, q.data.limit),
    });
  });

  r.get('/batches/:id/webhook-deliveries', async (req, res) => {
    const b = await ownBatch(ctx, req, req.params.id);
    res.json({ batch: b.id, deliveries: await ctx.store.listDeliveries(b.id) });
  });

  r.post('/batches/:id/reprocess', requireAdmin, express.json({ limit: '16kb' }), async (req, res) => {
    const id = req.params.id as string;
    const src = isBatchId(id) ? await ctx.store.getBatch(id) : null;
    if (!src) throw new ApiError('not-found', `no batch ${id}`);
    const body = ReprocessSchema.safeParse(req.body ?? {});
    if (!body.success) throw validationError(body.error, 'invalid reprocessing request');
    const ruleset = await resolveRuleSet(ctx.store, body.data.ruleset);
    const options: BatchOptions = {
      ...src.options,
      ...(body.data.tolerance ? { tolerance: body.data.tolerance } : {}),
      ...((body.data.metadata ?? src.metadata) ? { metadata: body.data.metadata ?? src.metadata } : {}),
    };
    const b = await reprocess(ctx, src, options, ruleset, ingestDeps);
    res.status(202).location(`/v1/batches/${b.id}`).json(batchView(b));
  });

  return r;
}

/** Re-scores a batch's stored spectra (same references, no re-upload) as a new batch of the same client. */
async function reprocess(
  ctx: AppContext,
  src: BatchRecord,
  options: BatchOptions,
  ruleset: Awaited<ReturnType<typeof resolveRuleSet>>,
  deps: Parameters<typeof ingestBatch>[0],
): Promise<BatchRecord> {
  async function* items(): AsyncGenerator<ReadItem> {
    for (let start = 0; start < src.total; start += 500) {
      const page = await ctx.store.getItems(src.id, start, Math.min(src.total, start + 500) - 1);
      const spectra = await ctx.store.getSpectra(page.filter((i) => i.hash).map((i) => i.hash!));
      let k = 0;
      for (const it of page) {
        const s = it.hash ? spectra[k++] : null;
        if (s) yield { kind: 'spectrum', index: it.index, spectrum: { ...s, id: it.id }, warnings: [] };
        else {
          const prev = (await ctx.store.getResultsRaw(src.id, it.index, 1))[0];
          const reason = prev
            ? (JSON.parse(prev).reason as { code: string; message: string } | undefined)
            : undefined;
          yield {
            kind: 'error',
            index: it.index,
            id: it.id,
            issue: {
              code: (reason?.code ?? 'invalid-spectrum') as 'invalid-spectrum',
              severity: 'error',
              message: reason?.message ?? 'this spectrum could not be read when it was submitted',
              position: { index: it.index, id: it.id },
            },
          };
        }
      }
    }
  }
  return ingestBatch(
    deps,
    { clientId: src.clientId, options, source: { kind: 'reprocess' }, items: items(), reprocessOf: src.id },
    ruleset,
  );
}

type Format = 'mgf' | 'mzml' | 'json';

/** Reads the first chunk to learn the input's format (for the batch's record) and gives the stream back whole. */
async function sniffStream(
  stream: Readable,
): Promise<{ format: Format | undefined; chunks: AsyncIterable<Buffer> }> {
  const it = stream[Symbol.asyncIterator]() as AsyncIterator<Buffer>;
  const first = await it.next();
  const head = first.done ? undefined : first.value;
  const format = head && !isGzip(head) ? sniffFormat(head) : undefined;
  async function* rest(): AsyncGenerator<Buffer> {
    if (head) yield head;
    for (;;) {
      const r = await it.next();
      if (r.done) return;
      yield r.value;
    }
  }
  return { format, chunks: rest() };
}
