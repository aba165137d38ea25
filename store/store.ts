import { randomBytes } from 'node:crypto';
import type { Redis } from 'ioredis';
import type { RuleSetRef, SpectrumResult } from '../engine/report/result.js';
import type { RuleSet } from '../engine/rules/schema.js';
import type { Spectrum } from '../engine/spectrum/spectrum.js';
import { type RedisKeys, redisKeys } from './keys.js';
import { deletePrefix } from './redis.js';
import type {
  BatchMetadata,
  BatchOptions,
  BatchState,
  BatchStatus,
  DeliveryRecord,
  ReadIssueRecord,
} from './schemas.js';

/** Options of {@link createStore}. */
export interface StoreOptions {
  redis: Redis;
  /** Hash-tagged key prefix. @defaultValue `{peel}` */
  prefix?: string;
  /** Clock, for tests. @defaultValue `() => new Date()` */
  now?: () => Date;
}

/** What a batch is created with. */
export interface NewBatch {
  clientId: string;
  ruleset: RuleSetRef;
  options: Omit<BatchOptions, 'ruleset' | 'metadata'>;
  metadata?: BatchMetadata;
  source: BatchStatus['source'];
  reprocessOf?: string;
}

/** One spectrum of a batch as stored: its content hash (null when it could not be read) and its id. */
export interface BatchItem {
  index: number;
  hash: string | null;
  id: string;
}

/** A batch's stored record (the status without links and derived numbers). */
export interface BatchRecord {
  id: string;
  clientId: string;
  state: BatchState;
  createdAt: string;
  updatedAt: string;
  finishedAt: string | null;
  total: number;
  processed: number;
  counts: { annotated: number; unassigned: number; error: number };
  ruleset: RuleSetRef;
  options: NewBatch['options'];
  metadata?: BatchMetadata;
  source: BatchStatus['source'];
  readIssues: { errors: number; warnings: number };
  reprocessOf?: string;
  failedChunks: number;
}

/** A result to record for one index of a batch. */
export interface IndexedResult {
  index: number;
  result: SpectrumResult;
}

/** What storing the results did. */
export interface MarkOutcome {
  /** Indexes newly recorded (the others already had a result: a retried or duplicate job). */
  added: number;
  /** Whether this call finished the batch (true exactly once per batch). */
  finished: boolean;
  state: BatchState | null;
}

/** A stored idempotency record. */
export type IdempotencyRecord =
  | { state: 'in-flight'; startedAt: string }
  | {
      state: 'done';
      fingerprint: string;
      status: number;
      headers: Record<string, string>;
      body: string;
    };

/** A client's webhook endpoint. */
export interface WebhookEndpoint {
  url: string;
  secret: string;
  createdAt: string;
}

/** Summary of a stored rule set. */
export interface RuleSetSummary extends RuleSetRef {
  storedAt: string;
  description?: string;
}

// Records results for indexes that have none yet (HSETNX: at-least-once delivery writes each index once),
// counts them, and finishes the batch when the last one lands. Returns {added, finished, state}.
const MARK_RESULTS = `
local batch, results = KEYS[1], KEYS[2]
local now, failedInc = ARGV[1], tonumber(ARGV[2])
local state = redis.call('HGET', batch, 'state')
if not state then return {0, 0, ''} end
if failedInc > 0 then redis.call('HINCRBY', batch, 'failedChunks', failedInc) end
local added = 0
for i = 3, #ARGV, 3 do
  if redis.call('HSETNX', results, ARGV[i], ARGV[i + 2]) == 1 then
    redis.call('HINCRBY', batch, 'n_' .. ARGV[i + 1], 1)
    added = added + 1
  end
end
local processed = redis.call('HINCRBY', batch, 'processed', added)
local total = tonumber(redis.call('HGET', batch, 'total') or '0')
redis.call('HSET', batch, 'updatedAt', now)
if state == 'queued' and added > 0 then
  state = 'running'
  redis.call('HSET', batch, 'state', state)
end
local finished = 0
if total > 0 and processed >= total and (state == 'queued' or state == 'running') then
  if tonumber(redis.call('HGET', batch, 'failedChunks') or '0') > 0 then state = 'failed' else state = 'completed' end
  redis.call('HSET', batch, 'state', state, 'finishedAt', now)
  finished = 1
end
return {added, finished, state}
`;

// Moves a batch to `cancelled` unless it already finished. Returns the state after the call.
const CANCEL = `
local state = redis.call('HGET', KEYS[1], 'state')
if not state then return '' end
if state == 'receiving' or state == 'queued' or state == 'running' then
  redis.call('HSET', KEYS[1], 'state', 'cancelled', 'finishedAt', ARGV[1], 'updatedAt', ARGV[1])
  return 'cancelled'
end
return state
`;

// Ends reception: sets the total; the batch becomes `running` if jobs already recorded results, else `queued`
// (unless it was cancelled meanwhile).
const FINALIZE = `
local state = redis.call('HGET', KEYS[1], 'state')
if not state then return '' end
redis.call('HSET', KEYS[1], 'total', ARGV[1], 'updatedAt', ARGV[2])
if state == 'receiving' then
  if tonumber(redis.call('HGET', KEYS[1], 'processed') or '0') > 0 then state = 'running' else state = 'queued' end
  redis.call('HSET', KEYS[1], 'state', state)
end
return state
`;

const TERMINAL: ReadonlySet<BatchState> = new Set(['completed', 'failed', 'cancelled']);

/** Whether a batch state is final. */
export function isTerminal(state: BatchState): boolean {
  return TERMINAL.has(state);
}

/** A new batch id: time-ordered (so ids sort by creation), random, without `:` (BullMQ job ids embed it). */
export function newBatchId(now: Date): string {
  return `b${now.getTime().toString(36).padStart(9, '0')}${randomBytes(8).toString('hex')}`;
}

/** Whether a string looks like a batch id (anything else is a 404 without a Redis round trip). */
export function isBatchId(s: string): boolean {
  return /^b[0-9a-z]{9}[0-9a-f]{16}$/.test(s);
}

const num = (v: string | undefined) => (v ? Number(v) : 0);

/**
 * Peel's persistence on Redis: batches, spectra (stored once by content hash), results (written once per
 * index), the result cache, rule sets, idempotency records, webhook endpoints and delivery logs.
 */
export class Store {
  readonly redis: Redis;
  readonly keys: RedisKeys;
  private readonly now: () => Date;

  constructor(options: StoreOptions) {
    this.redis = options.redis;
    this.keys = redisKeys(options.prefix ?? '{peel}');
    this.now = options.now ?? (() => new Date());
  }

  private iso(): string {
    return this.now().toISOString();
  }

  // ——— batches ———

  /** Creates a batch in state `receiving` and lists it under its client. */
  async createBatch(b: NewBatch): Promise<BatchRecord> {
    const now = this.now();
    const id = newBatchId(now);
    const at = now.toISOString();
    const fields: Record<string, string> = {
      id,
      clientId: b.clientId,
      state: 'receiving',
      createdAt: at,
      updatedAt: at,
      total: '0',
      processed: '0',
      ruleset: JSON.stringify(b.ruleset),
      options: JSON.stringify(b.options),
      source: JSON.stringify(b.source),
    };
    if (b.metadata) fields.metadata = JSON.stringify(b.metadata);
    if (b.reprocessOf) fields.reprocessOf = b.reprocessOf;
    await this.redis
      .multi()
      .hset(this.keys.batch(id), fields)
      .zadd(this.keys.clientBatches(b.clientId), 0, id)
      .exec()
      .then(execOk);
    return (await this.getBatch(id))!;
  }

  /** Reads a batch; null when there is none. */
  async getBatch(id: string): Promise<BatchRecord | null> {
    const h = await this.redis.hgetall(this.keys.batch(id));
    if (!h.id) return null;
    return {
      id: h.id,
      clientId: h.clientId!,
      state: h.state as BatchState,
      createdAt: h.createdAt!,
      updatedAt: h.updatedAt!,
      finishedAt: h.finishedAt ?? null,
      total: num(h.total),
      processed: num(h.processed),
      counts: { annotated: num(h.n_annotated), unassigned: num(h.n_unassigned), error: num(h.n_error) },
      ruleset: JSON.parse(h.ruleset!),
      options: JSON.parse(h.options!),
      metadata: h.metadata ? JSON.parse(h.metadata) : undefined,
      source: JSON.parse(h.source!),
      readIssues: { errors: num(h.issueErrors), warnings: num(h.issueWarnings) },
      reprocessOf: h.reprocessOf,
      failedChunks: num(h.failedChunks),
    };
  }

  /** A client's batches, newest first; `before` is the last id of the previous page. */
  async listBatches(
    clientId: string,
    limit: number,
    before?: string,
  ): Promise<{ ids: string[]; next: string | null }> {
    const ids = await this.redis.zrevrangebylex(
      this.keys.clientBatches(clientId),
      before ? `(${before}` : '+',
      '-',
      'LIMIT',
      0,
      limit + 1,
    );
    const page = ids.slice(0, limit);
    return { ids: page, next: ids.length > limit ? page[page.length - 1]! : null };
  }

  /**
   * Appends spectra (stored once by content hash) and unreadable entries to a batch being received.
   * Unreadable entries get their error result at once.
   */
  async appendItems(
    batchId: string,
    entries: Array<
      | { index: number; id: string; hash: string; spectrum: Spectrum }
      | { index: number; error: SpectrumResult }
    >,
  ): Promise<void> {
    if (entries.length === 0) return;
    const p = this.redis.pipeline();
    const items: string[] = [];
    const errors: IndexedResult[] = [];
    for (const e of entries) {
      if ('error' in e) {
        items.push(JSON.stringify([null, e.error.id]));
        errors.push({ index: e.index, result: e.error });
      } else {
        items.push(JSON.stringify([e.hash, e.id]));
        p.set(this.keys.spectrum(e.hash), JSON.stringify(e.spectrum), 'NX');
      }
    }
    p.rpush(this.keys.items(batchId), ...items);
    execOk(await p.exec());
    if (errors.length > 0) await this.markResults(batchId, errors);
  }

  /** Records read issues of a batch (the first `cap` are kept; all are counted). */
  async addIssues(batchId: string, issues: ReadIssueRecord[], cap = 1000): Promise<void> {
    if (issues.length === 0) return;
    const errors = issues.filter((i) => i.severity === 'error').length;
    const p = this.redis.pipeline();
    p.rpush(this.keys.issues(batchId), ...issues.map((i) => JSON.stringify(i)));
    p.ltrim(this.keys.issues(batchId), 0, cap - 1);
    if (errors > 0) p.hincrby(this.keys.batch(batchId), 'issueErrors', errors);
    if (issues.length > errors) p.hincrby(this.keys.batch(batchId), 'issueWarnings', issues.length - errors);
    execOk(await p.exec());
  }

  /** Read issues of a batch. */
  async listIssues(batchId: string, offset: number, limit: number): Promise<ReadIssueRecord[]> {
    const raw = await this.redis.lrange(this.keys.issues(batchId), offset, offset + limit - 1);
    return raw.map((r) => JSON.parse(r));
  }

  /**
   * Ends reception: sets the total and moves the batch to `queued` (or `running`, if jobs queued during the
   * upload already recorded results); finishes it if every result is already in.
   */
  async finalizeBatch(batchId: string): Promise<MarkOutcome> {
    const total = await this.redis.llen(this.keys.items(batchId));
    await this.redis.eval(FINALIZE, 1, this.keys.batch(batchId), String(total), this.iso());
    return this.markResults(batchId, []);
  }

  /** Marks a batch as failed before it was queued (e.g. the queue was unreachable). */
  async failReception(batchId: string): Promise<void> {
    const at = this.iso();
    await this.redis.hset(this.keys.batch(batchId), { state: 'failed', finishedAt: at, updatedAt: at });
  }

  /** Deletes a batch and everything it owns (not the shared spectra or cached results). */
  async deleteBatch(batchId: string, clientId: string): Promise<void> {
    await this.redis
      .multi()
      .del(
        this.keys.batch(batchId),
        this.keys.items(batchId),
        this.keys.results(batchId),
        this.keys.issues(batchId),
        this.keys.deliveries(batchId),
      )
      .zrem(this.keys.clientBatches(clientId), batchId)
      .exec()
      .then(execOk);
  }

  /** Items `start..end` (inclusive) of a batch. */
  async getItems(batchId: string, start: number, end: number): Promise<BatchItem[]> {
    const raw = await this.redis.lrange(this.keys.items(batchId), start, end);
    return raw.map((r, i) => {
      const [hash, id] = JSON.parse(r) as [string | null, string];
      return { index: start + i, hash, id };
    });
  }

  /** Spectra by content hash (null where missing). */
  async getSpectra(hashes: string[]): Promise<Array<Spectrum | null>> {
    if (hashes.length === 0) return [];
    const raw = await this.redis.mget(...hashes.map((h) => this.keys.spectrum(h)));
    return raw.map((r) => (r ? (JSON.parse(r) as Spectrum) : null));
  }

  /** Which of the given indexes already have a result. */
  async doneIndexes(batchId: string, indexes: number[]): Promise<Set<number>> {
    if (indexes.length === 0) return new Set();
    const have = await this.redis.hmget(this.keys.results(batchId), ...indexes.map(String));
    return new Set(indexes.filter((_, i) => have[i] !== null));
  }

  /** Records results of a batch, once per index; see {@link MarkOutcome}. */
  async markResults(batchId: string, results: IndexedResult[], failedChunk = false): Promise<MarkOutcome> {
    const args: string[] = [this.iso(), failedChunk ? '1' : '0'];
    for (const r of results) args.push(String(r.index), r.result.status, JSON.stringify(r.result));
    const [added, finished, state] = (await this.redis.eval(
      MARK_RESULTS,
      2,
      this.keys.batch(batchId),
      this.keys.results(batchId),
      ...args,
    )) as [number, number, string];
    return { added, finished: finished === 1, state: (state || null) as BatchState | null };
  }

  /** Cancels a batch unless it already finished; returns the state after the call (null: no batch). */
  async cancelBatch(batchId: string): Promise<BatchState | null> {
    const s = (await this.redis.eval(CANCEL, 1, this.keys.batch(batchId), this.iso())) as string;
    return (s || null) as BatchState | null;
  }

  /** Raw result JSON for indexes `start..start+count-1` (null where none yet). */
  async getResultsRaw(batchId: string, start: number, count: number): Promise<Array<string | null>> {
    if (count <= 0) return [];
    const idx = Array.from({ length: count }, (_, i) => String(start + i));
    return this.redis.hmget(this.keys.results(batchId), ...idx);
  }

  // ——— result cache ———

  /** Cached results by spectrum hash under one scoring key (null where none). */
  async getCachedResults(scoringKey: string, hashes: string[]): Promise<Array<SpectrumResult | null>> {
    if (hashes.length === 0) return [];
    const raw = await this.redis.mget(...hashes.map((h) => this.keys.cachedResult(scoringKey, h)));
    return raw.map((r) => (r ? (JSON.parse(r) as SpectrumResult) : null));
  }

  /** Caches results (first write wins, so a result never changes once served). */
  async cacheResults(
    scoringKey: string,
    entries: Array<{ hash: string; result: SpectrumResult }>,
    ttlSeconds: number,
  ): Promise<void> {
    if (entries.length === 0 || ttlSeconds <= 0) return;
    const p = this.redis.pipeline();
    for (const e of entries) {
      p.set(this.keys.cachedResult(scoringKey, e.hash), JSON.stringify(e.result), 'EX', ttlSeconds, 'NX');
    }
    execOk(await p.exec());
  }

  // ——— rule sets ———

  /** Stores a validated rule set under its sha256 (idempotent). */
  async putRuleSet(sha256: string, rules: RuleSet): Promise<RuleSetSummary> {
    const summary: RuleSetSummary = {
      name: rules.name,
      version: rules.version,
      sha256,
      storedAt: this.iso(),
      ...(rules.description ? { description: rules.description } : {}),
    };
    const p = this.redis.pipeline();
    p.set(this.keys.ruleset(sha256), JSON.stringify(rules), 'NX');
    p.hsetnx(this.keys.rulesets(), sha256, JSON.stringify(summary));
    execOk(await p.exec());
    const stored = await this.redis.hget(this.keys.rulesets(), sha256);
    return JSON.parse(stored!);
  }

  /** A stored rule set by sha256, or null. */
  async getRuleSet(sha256: string): Promise<RuleSet | null> {
    const raw = await this.redis.get(this.keys.ruleset(sha256));
    return raw ? (JSON.parse(raw) as RuleSet) : null;
  }

  /** Every stored rule set's summary, with which one is active. */
  async listRuleSets(): Promise<{ active: string | null; rulesets: RuleSetSummary[] }> {
    const [all, active] = await Promise.all([
      this.redis.hgetall(this.keys.rulesets()),
      this.redis.get(this.keys.activeRuleset()),
    ]);
    const rulesets = Object.values(all)
      .map((v) => JSON.parse(v) as RuleSetSummary)
      .sort((a, b) => a.storedAt.localeCompare(b.storedAt));
    return { active, rulesets };
  }

  /** The active rule set's summary, or null when none is active. */
  async activeRuleSet(): Promise<RuleSetSummary | null> {
    const sha = await this.redis.get(this.keys.activeRuleset());
    if (!sha) return null;
    const s = await this.redis.hget(this.keys.rulesets(), sha);
    return s ? JSON.parse(s) : null;
  }

  /** A stored rule set's summary, or null. */
  async ruleSetSummary(sha256: string): Promise<RuleSetSummary | null> {
    const s = await this.redis.hget(this.keys.rulesets(), sha256);
    return s ? JSON.parse(s) : null;
  }

  /** Makes a stored rule set the active one (`onlyIfNone`: only when none is active yet). */
  async activateRuleSet(sha256: string, onlyIfNone = false): Promise<boolean> {
    if (onlyIfNone) return (await this.redis.set(this.keys.activeRuleset(), sha256, 'NX')) === 'OK';
    await this.redis.set(this.keys.activeRuleset(), sha256);
    return true;
  }

  // ——— idempotency ———

  /** Claims an idempotency key; returns null when claimed now, else the existing record. */
  async claimIdempotencyKey(
    clientId: string,
    key: string,
    lockSeconds: number,
  ): Promise<IdempotencyRecord | null> {
    const k = this.keys.idempotency(clientId, key);
    const rec: IdempotencyRecord = { state: 'in-flight', startedAt: this.iso() };
    const ok = await this.redis.set(k, JSON.stringify(rec), 'EX', lockSeconds, 'NX');
    if (ok === 'OK') return null;
    const raw = await this.redis.get(k);
    // Expired between the two calls: treat as in flight; the client retries.
    return raw ? (JSON.parse(raw) as IdempotencyRecord) : rec;
  }

  /** Stores the first response under an idempotency key. */
  async completeIdempotencyKey(
    clientId: string,
    key: string,
    rec: Extract<IdempotencyRecord, { state: 'done' }>,
    ttlSeconds: number,
  ): Promise<void> {
    await this.redis.set(this.keys.idempotency(clientId, key), JSON.stringify(rec), 'EX', ttlSeconds);
  }

  /** Frees an idempotency key whose request did not succeed, so the client may retry it. */
  async releaseIdempotencyKey(clientId: string, key: string): Promise<void> {
    await this.redis.del(this.keys.idempotency(clientId, key));
  }

  // ——— webhooks ———

  /** Sets a client's webhook endpoint, keeping its secret unless `secret` is given. */
  async setWebhook(
    clientId: string,
    url: string,
    newSecret: () => string,
    rotate = false,
  ): Promise<WebhookEndpoint> {
    const k = this.keys.webhook(clientId);
    const existing = await this.getWebhook(clientId);
    const ep: WebhookEndpoint = {
      url,
      secret: existing && !rotate ? existing.secret : newSecret(),
      createdAt: existing && !rotate ? existing.createdAt : this.iso(),
    };
    await this.redis.hset(k, { ...ep });
    return ep;
  }

  /** A client's webhook endpoint, or null. */
  async getWebhook(clientId: string): Promise<WebhookEndpoint | null> {
    const h = await this.redis.hgetall(this.keys.webhook(clientId));
    return h.url && h.secret ? { url: h.url, secret: h.secret, createdAt: h.createdAt ?? '' } : null;
  }

  /** Removes a client's webhook endpoint. */
  async deleteWebhook(clientId: string): Promise<boolean> {
    return (await this.redis.del(this.keys.webhook(clientId))) > 0;
  }

  /** Appends one delivery attempt to a batch's delivery log (the last 500 are kept). */
  async logDelivery(batchId: string, rec: DeliveryRecord): Promise<void> {
    await this.redis
      .multi()
      .rpush(this.keys.deliveries(batchId), JSON.stringify(rec))
      .ltrim(this.keys.deliveries(batchId), -500, -1)
      .exec()
      .then(execOk);
  }

  /** A batch's delivery log, oldest first. */
  async listDeliveries(batchId: string): Promise<DeliveryRecord[]> {
    return (await this.redis.lrange(this.keys.deliveries(batchId), 0, -1)).map((r) => JSON.parse(r));
  }

  /** Deletes every key under this store's prefix (tests and tear-down only). */
  async deleteEverything(): Promise<number> {
    return deletePrefix(this.redis, `${this.keys.prefix}:`);
  }
}

/** Builds a {@link Store}. */
export function createStore(options: StoreOptions): Store {
  return new Store(options);
}

/** Throws the first error of a MULTI/pipeline reply. */
function execOk<T>(res: Array<[Error | null, unknown]> | null): T {
  if (!res) throw Object.assign(new Error('Redis transaction aborted'), { code: 'store-unavailable' });
  for (const [err] of res) if (err) throw err;
  return res as T;
}
