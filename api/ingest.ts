import type { Queue } from 'bullmq';
import type { RuleSetRef } from '../engine/report/result.js';
import type { ReadIssue, ReadItem } from '../formats/read-types.js';
import { spectrumHash } from '../store/hash.js';
import type { BatchOptions, BatchStatus, ReadIssueRecord } from '../store/schemas.js';
import type { BatchRecord, Store } from '../store/store.js';
import { chunkJobId, type ScoreJobData } from '../worker/queues.js';
import { errorResult } from '../worker/score-processor.js';
import { ApiError, type FieldProblem } from './errors.js';
import type { Metrics } from './metrics.js';

/** What ingestion needs. */
export interface IngestDeps {
  store: Store;
  scoreQueue: Queue<ScoreJobData>;
  /** Spectra per scoring job. */
  chunkSize: number;
  /** Most spectra in one batch. */
  maxSpectra: number;
  metrics?: Metrics;
}

/** One batch to take in. */
export interface IngestRequest {
  clientId: string;
  options: BatchOptions;
  source: BatchStatus['source'];
  items: AsyncIterable<ReadItem>;
  reprocessOf?: string;
}

/** The rule set a batch asks for (or the active one); a 422 problem when there is none. */
export async function resolveRuleSet(store: Store, sha256: string | undefined): Promise<RuleSetRef> {
  const s = sha256 ? await store.ruleSetSummary(sha256) : await store.activeRuleSet();
  if (!s) {
    throw new ApiError(
      'unknown-ruleset',
      sha256 ? `no stored rule set has sha256 ${sha256}` : 'no rule set is active; an admin must upload one',
      sha256 ? { errors: [{ pointer: '/ruleset', detail: 'not a stored rule set (GET /v1/rulesets)' }] } : {},
    );
  }
  return { name: s.name, version: s.version, sha256: s.sha256 };
}

const FLUSH = 500;

/**
 * Takes in a batch from a stream of read items: stores each spectrum once (by content hash), gives each
 * unreadable one its error result at once, then queues one job per chunk. If nothing could be read the
 * batch is dropped and a 422 problem lists the first read errors; if the input fails midway (the client
 * hung up, the body was too large) the partial batch is dropped and the error passed on.
 */
export async function ingestBatch(
  deps: IngestDeps,
  req: IngestRequest,
  ruleset: RuleSetRef,
): Promise<BatchRecord> {
  const { store } = deps;
  const { ruleset: _r, metadata, ...scoring } = req.options;
  const batch = await store.createBatch({
    clientId: req.clientId,
    ruleset,
    options: scoring,
    ...(metadata ? { metadata } : {}),
    source: req.source,
    ...(req.reprocessOf ? { reprocessOf: req.reprocessOf } : {}),
  });
  let n = 0;
  let good = 0;
  const firstErrors: ReadIssueRecord[] = [];
  let entries: Parameters<Store['appendItems']>[1] = [];
  let issues: ReadIssueRecord[] = [];
  // Chunks are queued as soon as their spectra are stored, so scoring overlaps a long upload.
  let queued = 0;
  const enqueueReady = async (all: boolean) => {
    const upTo = all ? n : n - (n % deps.chunkSize);
    if (upTo > queued) {
      await enqueueChunks(deps, batch.id, queued, upTo);
      queued = upTo;
    }
  };
  const flush = async () => {
    await store.appendItems(batch.id, entries);
    await store.addIssues(batch.id, issues);
    entries = [];
    issues = [];
    await enqueueReady(false);
  };
  try {
    for await (const item of req.items) {
      if (n >= deps.maxSpectra) {
        throw new ApiError(
          'payload-too-large',
          `a batch holds at most ${deps.maxSpectra} spectra; split the input`,
        );
      }
      const index = n++;
      if (item.kind === 'spectrum') {
        good++;
        entries.push({
          index,
          id: item.spectrum.id,
          hash: spectrumHash(item.spectrum),
          spectrum: item.spectrum,
        });
        for (const w of item.warnings) issues.push(issueRecord(w, index));
      } else {
        const id = item.id ?? item.issue.position.id ?? `index-${index}`;
        entries.push({ index, error: { ...errorResult(id, item.issue.code, item.issue.message), index } });
        const rec = issueRecord(item.issue, index);
        issues.push(rec);
        if (firstErrors.length < 50) firstErrors.push(rec);
      }
      if (entries.length >= FLUSH) await flush();
    }
    await flush();
  } catch (err) {
    await store.deleteBatch(batch.id, req.clientId).catch(() => {});
    throw err;
  }
  if (good === 0) {
    await store.deleteBatch(batch.id, req.clientId);
    throw new ApiError(
      'no-spectra',
      n === 0 ? 'the input holds no spectra' : `none of the ${n} spectra in the input could be read`,
      { errors: firstErrors.map(fieldProblem) },
    );
  }
  try {
    await enqueueReady(true);
  } catch (err) {
    await store.failReception(batch.id).catch(() => {});
    throw err;
  }
  await store.finalizeBatch(batch.id);
  deps.metrics?.batchesSubmitted.inc({ source: req.source.kind });
  deps.metrics?.spectraSubmitted.inc({ source: req.source.kind }, n);
  return (await store.getBatch(batch.id))!;
}

/**
 * Queues the scoring jobs of spectra `from..to-1` of a batch, one per chunk (`from` is a multiple of the
 * chunk size), with job ids derived from the batch and chunk number.
 */
export async function enqueueChunks(
  deps: Pick<IngestDeps, 'scoreQueue' | 'chunkSize'>,
  batchId: string,
  from: number,
  to: number,
) {
  const jobs: Array<{ name: string; data: ScoreJobData; opts: { jobId: string } }> = [];
  for (let start = from; start < to; start += deps.chunkSize) {
    const end = Math.min(to, start + deps.chunkSize) - 1;
    const k = Math.floor(start / deps.chunkSize);
    jobs.push({ name: 'chunk', data: { batchId, start, end }, opts: { jobId: chunkJobId(batchId, k) } });
  }
  for (let i = 0; i < jobs.length; i += 1000) await deps.scoreQueue.addBulk(jobs.slice(i, i + 1000));
}

function issueRecord(issue: ReadIssue, index: number): ReadIssueRecord {
  const p = issue.position;
  return {
    code: issue.code,
    severity: issue.severity,
    message: issue.message,
    position: {
      index: p.index ?? index,
      ...(p.file !== undefined ? { file: p.file } : {}),
      ...(p.line !== undefined ? { line: p.line } : {}),
      ...(p.id !== undefined ? { id: p.id } : {}),
      ...(p.path !== undefined ? { path: p.path } : {}),
    },
  };
}

function fieldProblem(r: ReadIssueRecord): FieldProblem {
  return {
    ...(r.position.path !== undefined ? { pointer: r.position.path } : {}),
    detail: r.message,
    code: r.code,
    ...(r.position.line !== undefined ? { line: r.position.line } : {}),
    ...(r.position.index !== undefined ? { index: r.position.index } : {}),
  };
}
