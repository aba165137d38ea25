import { type Request, type Response, Router } from 'express';
import { DISCLAIMER, type SpectrumResult } from '../engine/report/result.js';
import { peelVersion } from '../formats/package-root.js';
import type { ResultsWriter } from '../formats/results-writer.js';
import { createCsvWriter } from '../formats/write-csv.js';
import { createJsonWriter } from '../formats/write-json.js';
import { createMzTabWriter } from '../formats/write-mztab.js';
import type { RuleSet } from '../engine/rules/schema.js';
import { createNdjsonWriter } from '../formats/write-ndjson.js';
import type { BatchRecord } from '../store/store.js';
import { ownBatch } from './batches.js';
import type { AppContext } from './context.js';
import { ApiError, validationError } from './errors.js';
import { ResultsQuerySchema } from './schemas.js';

type Format = 'json' | 'ndjson' | 'csv' | 'mztab';

/** Media types offered for results, by format (the first of each is what is sent). */
const MEDIA: Array<[string, Format]> = [
  ['application/json', 'json'],
  ['application/x-ndjson', 'ndjson'],
  ['application/jsonl', 'ndjson'],
  ['text/csv', 'csv'],
  ['text/tab-separated-values', 'mztab'],
  ['text/x-mztab', 'mztab'],
];

/** The results format: `?format=` first, else the Accept header, else JSON; 406 when nothing fits. */
function chooseFormat(req: Request, explicit: Format | undefined): Format {
  if (explicit) return explicit;
  if (!req.get('accept')) return 'json';
  const m = req.accepts(MEDIA.map(([t]) => t));
  if (!m) {
    throw new ApiError(
      'not-acceptable',
      `results are available as ${MEDIA.map(([t]) => t).join(', ')} (or ?format=)`,
    );
  }
  return MEDIA.find(([t]) => t === m)![1];
}

interface Filter {
  statuses: Set<string> | null;
  maxLevel: number | undefined;
}

function keep(r: SpectrumResult, f: Filter): boolean {
  if (f.statuses && !f.statuses.has(r.status)) return false;
  if (f.maxLevel !== undefined) {
    const best = r.candidates[0];
    if (!best || best.confidenceLevel > f.maxLevel) return false;
  }
  return true;
}

const PAGE = 500;

/**
 * Iterates a batch's recorded results from `cursor` in index order, filtered, up to `limit`; reports the
 * index to continue from (null at the end). Results are stored once per index, so every read of a
 * finished batch gives the same bytes.
 */
async function* readResults(
  ctx: AppContext,
  b: BatchRecord,
  cursor: number,
  limit: number | undefined,
  filter: Filter,
  state: { next: number | null },
): AsyncGenerator<SpectrumResult> {
  let n = 0;
  state.next = null;
  for (let start = cursor; start < b.total; start += PAGE) {
    const raw = await ctx.store.getResultsRaw(b.id, start, Math.min(PAGE, b.total - start));
    for (let k = 0; k < raw.length; k++) {
      const text = raw[k];
      if (!text) continue;
      const r = JSON.parse(text) as SpectrumResult;
      if (!keep(r, filter)) continue;
      if (limit !== undefined && n >= limit) {
        state.next = start + k;
        return;
      }
      n++;
      yield r;
    }
  }
}

function writerFor(format: Format, res: Response, b: BatchRecord, rules: RuleSet | null): ResultsWriter {
  switch (format) {
    case 'json':
      return createJsonWriter(res);
    case 'ndjson':
      return createNdjsonWriter(res);
    case 'csv':
      return createCsvWriter(res);
    case 'mztab':
      return createMzTabWriter(res, {
        // Same-formula alternatives each get their own molecule and ion type, as `peel score` writes them.
        ...(rules ? { aglycones: rules.aglycones } : {}),
        softwareVersion: peelVersion(),
        mzTabId: `peel-${b.id}`,
        msRuns: [
          {
            ...(b.source.kind === 'mgf' || b.source.kind === 'mzml' || b.source.kind === 'json'
              ? { format: b.source.kind }
              : {}),
            ...(b.source.filename ? { name: b.source.filename } : {}),
          },
        ],
      });
  }
}

/** The results routes: a whole batch (or a page) in any format, one spectrum, and the change report. */
export function resultRoutes(ctx: AppContext): Router {
  const r = Router();

  r.get('/batches/:id/results', async (req, res) => {
    const b = await ownBatch(ctx, req, req.params.id);
    const q = ResultsQuerySchema.safeParse(req.query);
    if (!q.success) throw validationError(q.error, 'invalid query parameters', ['query']);
    const format = chooseFormat(req, q.data.format);
    const filter: Filter = {
      statuses: q.data.status ? new Set(q.data.status.split(',')) : null,
      maxLevel: q.data.maxConfidenceLevel,
    };
    const state = { next: null as number | null };
    res.set('Peel-Batch-State', b.state);
    res.set(
      'Cache-Control',
      b.state === 'completed' || b.state === 'failed' ? 'private, max-age=3600' : 'no-store',
    );

    if (format === 'json' && q.data.limit !== undefined) {
      // A page: small enough to build whole, with the cursor of the next page.
      const spectra: SpectrumResult[] = [];
      for await (const x of readResults(ctx, b, q.data.cursor, q.data.limit, filter, state)) spectra.push(x);
      if (state.next !== null)
        res.set('Link', `</v1/batches/${b.id}/results?${nextQuery(req, state.next)}>; rel="next"`);
      res.json({
        ruleset: b.ruleset,
        disclaimer: DISCLAIMER,
        batch: { id: b.id, state: b.state },
        spectra,
        page: { cursor: q.data.cursor, next: state.next },
      });
      return;
    }

    const rules = format === 'mztab' ? await ctx.store.getRuleSet(b.ruleset.sha256) : null;
    const writer = writerFor(format, res, b, rules);
    // attachment() sets a type from the file name: set the writer's type after it.
    if (format === 'csv') res.attachment(`${b.id}.csv`);
    if (format === 'mztab') res.attachment(`${b.id}.mztab`);
    res.status(200).type(writer.contentType);
    let begun = false;
    try {
      await writer.begin(b.ruleset);
      begun = true;
      for await (const x of readResults(ctx, b, q.data.cursor, q.data.limit, filter, state))
        await writer.write(x);
      await writer.end();
      res.end();
    } catch (err) {
      await writer.abort().catch(() => {});
      if (!begun && !res.headersSent) throw err;
      // Mid-stream: the client sees a cut response; the error is logged by the middleware.
      throw err;
    }
  });

  r.get('/batches/:id/results/:index', async (req, res) => {
    const b = await ownBatch(ctx, req, req.params.id);
    const index = Number(req.params.index);
    if (!Number.isInteger(index) || index < 0 || index >= b.total) {
      throw new ApiError(
        'not-found',
        `batch ${b.id} has no spectrum at index ${req.params.index} (0..${b.total - 1})`,
      );
    }
    const raw = (await ctx.store.getResultsRaw(b.id, index, 1))[0];
    if (!raw) throw new ApiError('not-found', `spectrum ${index} of batch ${b.id} has not been scored yet`);
    res.type('application/json').send(raw);
  });

  r.get('/batches/:id/changes', async (req, res) => {
    const b = await ownBatch(ctx, req, req.params.id);
    if (!b.reprocessOf)
      throw new ApiError('not-found', `batch ${b.id} is not a reprocessing of another batch`);
    const src = await ctx.store.getBatch(b.reprocessOf);
    if (!src) throw new ApiError('not-found', `the original batch ${b.reprocessOf} is gone`);
    const changes = [];
    for (let start = 0; start < b.total; start += PAGE) {
      const n = Math.min(PAGE, b.total - start);
      const [after, before] = await Promise.all([
        ctx.store.getResultsRaw(b.id, start, n),
        ctx.store.getResultsRaw(src.id, start, n),
      ]);
      for (let k = 0; k < n; k++) {
        const a = summary(after[k] ?? null);
        const o = summary(before[k] ?? null);
        if (a.status !== o.status || a.best !== o.best || a.confidenceLevel !== o.confidenceLevel) {
          changes.push({
            index: start + k,
            id: a.id ?? o.id ?? `index-${start + k}`,
            before: o.view,
            after: a.view,
          });
        }
      }
    }
    res.json({
      batch: b.id,
      reprocessOf: src.id,
      from: src.ruleset,
      to: b.ruleset,
      total: b.total,
      changed: changes.length,
      changes,
    });
  });

  return r;
}

function summary(raw: string | null) {
  const r = raw ? (JSON.parse(raw) as SpectrumResult) : null;
  const top = r?.candidates[0];
  const best = top ? `${top.aglycone.name} ${top.topology} ${top.formula}` : null;
  const view = { status: r?.status ?? 'pending', best, confidenceLevel: top?.confidenceLevel ?? null };
  return { id: r?.id, ...view, view };
}

function nextQuery(req: Request, next: number): string {
  const p = new URLSearchParams();
  for (const [k, v] of Object.entries(req.query)) if (typeof v === 'string' && k !== 'cursor') p.set(k, v);
  p.set('cursor', String(next));
  return p.toString();
}
