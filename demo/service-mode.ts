import { randomBytes } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { basename } from 'node:path';
import { Redis } from 'ioredis';
import { pino } from 'pino';
import { hashApiKey, newApiKey } from '../api/auth.js';
import { parseConfig } from '../api/config.js';
import { startService } from '../api/service.js';
import type { ResultsDocument } from '../engine/report/result.js';
import { connectRedis, createRedis, deletePrefix, scanPrefix } from '../store/redis.js';
import type { DemoProgress } from './progress.js';

/** The demo stopped on purpose (Ctrl-C) or because something it needs failed; `message` says which. */
export class DemoError extends Error {
  override readonly name = 'DemoError' as const;
  constructor(
    message: string,
    readonly code: 'aborted' | 'redis-unreachable' | 'service' | 'http' | 'batch' | 'input' | 'output',
    options?: { cause?: unknown },
  ) {
    super(message, options);
  }
}

/** The password of a Redis URL hidden, for messages. */
export function redactUrl(url: string): string {
  return url.replace(/\/\/[^@/]*@/, '//***@');
}

/**
 * Whether a Redis answers at `url` within `timeoutMs` (connect and PING), without retrying or queueing:
 * the demo must never hang on a Redis that is not there.
 */
export async function probeRedis(
  url: string,
  timeoutMs = 1500,
): Promise<{ ok: true } | { ok: false; reason: string }> {
  let redis: Redis;
  try {
    redis = new Redis(url, {
      lazyConnect: true,
      connectTimeout: timeoutMs,
      maxRetriesPerRequest: 0,
      enableOfflineQueue: false,
      retryStrategy: () => null,
      disconnectTimeout: 200,
    });
  } catch (err) {
    return { ok: false, reason: (err as Error).message };
  }
  // The first socket error says why (ECONNREFUSED, ENOTFOUND …); the rejected connect only says "closed".
  let first: NodeJS.ErrnoException | undefined;
  redis.on('error', (err: NodeJS.ErrnoException) => {
    first ??= err;
  });
  let timer: NodeJS.Timeout | undefined;
  try {
    await Promise.race([
      redis.connect().then(() => redis.ping()),
      new Promise((_, reject) => {
        timer = setTimeout(() => reject(new Error(`no answer within ${timeoutMs} ms`)), timeoutMs);
      }),
    ]);
    return { ok: true };
  } catch (err) {
    const e = first ?? (err as NodeJS.ErrnoException);
    if (/RESP/.test(e.message)) return { ok: false, reason: 'something answered there, but not Redis' };
    return { ok: false, reason: e.code ?? e.message };
  } finally {
    clearTimeout(timer);
    // disconnect() on a connection that already ended would hold the process for ioredis's disconnectTimeout.
    if (redis.status !== 'end') redis.disconnect();
  }
}

/** Deletes every key under a prefix (SCAN + UNLINK); returns how many were deleted. */
export function deleteKeys(url: string, prefix: string): Promise<number> {
  return withRedis(url, (redis) => deletePrefix(redis, prefix));
}

/** Counts keys under a prefix (tests check the demo left none). */
export function countKeys(url: string, prefix: string): Promise<number> {
  return withRedis(url, (redis) => scanPrefix(redis, prefix, (keys) => keys.length));
}

async function withRedis<T>(url: string, use: (redis: Redis) => Promise<T>): Promise<T> {
  const redis = createRedis(url, 'producer');
  redis.on('error', () => {});
  try {
    await connectRedis(redis);
    return await use(redis);
  } finally {
    await redis.quit().catch(() => redis.disconnect());
  }
}

/** Options of {@link scoreViaService}. */
export interface ServiceModeOptions {
  redisUrl: string;
  /** MGF files sent as the batch, one after the other, as one upload. */
  files: readonly string[];
  /** Name of the upload (the batch's file name in the service and in mzTab-M). */
  uploadName: string;
  /** Batch metadata (kept by the service, returned with the batch). */
  metadata: Record<string, string | number | boolean | string[]>;
  /** Key prefix of this run. @defaultValue `{peel-demo-<random>}` */
  keyPrefix?: string;
  /** Where progress goes. */
  progress: DemoProgress;
  /** Narration lines (stderr). */
  say: (line: string) => void;
  /** Service log level (warnings and errors are shown as narration). @defaultValue warn */
  logLevel?: 'warn' | 'error' | 'silent';
  signal?: AbortSignal;
  /** Give up when the batch makes no progress for this long, ms. @defaultValue 120000 */
  stallTimeoutMs?: number;
}

/** What the service returned. */
export interface ServiceModeResult {
  document: ResultsDocument;
  texts: { json: string; csv: string; mztab: string };
  batchId: string;
  state: string;
  keyPrefix: string;
  port: number;
  keysDeleted: number;
}

interface Problem {
  status?: number;
  code?: string;
  title?: string;
  detail?: string;
}

/** Waits `ms`, or less when the signal aborts. */
function sleep(ms: number, signal?: AbortSignal): Promise<void> {
  return new Promise<void>((resolve) => {
    const done = () => {
      clearTimeout(t);
      signal?.removeEventListener('abort', done);
      resolve();
    };
    const t = setTimeout(done, ms);
    signal?.addEventListener('abort', done, { once: true });
  });
}

/**
 * Runs the whole service path in this process: API and workers (`startService`) on a free localhost port
 * against the Redis at `redisUrl`, under a fresh key prefix and with a client and an admin key made here;
 * submits the batch over HTTP as an MGF upload, polls it, fetches its results as JSON, CSV and mzTab-M, then
 * stops everything and deletes the run's Redis keys — also when something fails.
 */
export async function scoreViaService(o: ServiceModeOptions): Promise<ServiceModeResult> {
  const prefix = o.keyPrefix ?? `{peel-demo-${randomBytes(5).toString('hex')}}`;
  const clientKey = newApiKey();
  const adminKey = newApiKey();
  const config = parseConfig({
    REDIS_URL: o.redisUrl,
    KEY_PREFIX: prefix,
    HOST: '127.0.0.1',
    PORT: '0',
    API_KEYS: `fernhollow-core:client:${hashApiKey(clientKey)},peel-demo-admin:admin:${hashApiKey(adminKey)}`,
    // A laptop's Redis may not run noeviction; for a short demo a loud warning is enough.
    EVICTION_POLICY_CHECK: 'warn',
    // Small chunks so that the progress bar moves on 66 spectra.
    CHUNK_SIZE: '6',
    WORKER_CONCURRENCY: '2',
    LOG_LEVEL: o.logLevel ?? 'warn',
  });
  // Service log lines become short narration lines instead of JSON on the terminal.
  const logger = pino(
    { level: config.LOG_LEVEL },
    {
      write(line: string) {
        try {
          const rec = JSON.parse(line) as { level?: number; msg?: string; err?: { message?: string } };
          const level = (rec.level ?? 30) >= 50 ? 'error' : 'warning';
          o.progress.clear();
          o.say(`service ${level}: ${rec.msg ?? ''}${rec.err?.message ? ` (${rec.err.message})` : ''}`);
        } catch {
          o.say(line.trimEnd());
        }
      },
    },
  );

  o.say(`starting API + workers in this process (Redis ${redactUrl(o.redisUrl)}, key prefix ${prefix}) …`);
  let service: Awaited<ReturnType<typeof startService>> | undefined;
  let keysDeleted = 0;
  let out: Omit<ServiceModeResult, 'keysDeleted'> | undefined;
  try {
    try {
      service = await startService({ config, logger, withWorkers: true });
    } catch (err) {
      throw new DemoError(`the service did not start: ${(err as Error).message}`, 'service', { cause: err });
    }
    const base = `http://127.0.0.1:${service.port}`;
    const call = async (path: string, init: RequestInit & { key?: string } = {}): Promise<Response> => {
      if (o.signal?.aborted) throw new DemoError('stopped', 'aborted');
      const { key, ...rest } = init;
      const res = await fetch(`${base}${path}`, {
        ...rest,
        headers: { Authorization: `Bearer ${key ?? clientKey}`, ...(rest.headers as Record<string, string>) },
      });
      if (!res.ok) {
        const text = await res.text();
        let p: Problem = {};
        try {
          p = JSON.parse(text) as Problem;
        } catch {
          // Not problem details: show the status only.
        }
        throw new DemoError(
          `${init.method ?? 'GET'} ${path} answered ${res.status}${p.code ? ` ${p.code}` : ''}: ${p.detail ?? p.title ?? text.slice(0, 200)}`,
          'http',
        );
      }
      return res;
    };
    o.say(
      `API listening on ${base}; demo keys made in memory (client "fernhollow-core", admin "peel-demo-admin")`,
    );

    const rulesets = (await (await call('/v1/rulesets', { key: adminKey })).json()) as {
      active: string | null;
      rulesets: Array<{ name: string; version: string; sha256: string }>;
    };
    const active = rulesets.rulesets.find((r) => r.sha256 === rulesets.active);
    if (active)
      o.say(`active rule set: ${active.name} ${active.version} (sha256 ${active.sha256.slice(0, 12)}…)`);

    // One batch: the MGF files one after the other are one valid MGF file.
    const parts = await Promise.all(o.files.map((f) => readFile(f)));
    const form = new FormData();
    form.append('options', JSON.stringify({ metadata: o.metadata }));
    form.append('file', new Blob(parts, { type: 'application/x-mgf' }), o.uploadName);
    o.say(
      `submitting batch over HTTP: POST /v1/batches (${o.files.map((f) => basename(f)).join(' + ')} as one MGF upload "${o.uploadName}")`,
    );
    const submitted = await call('/v1/batches', {
      method: 'POST',
      body: form,
      headers: { 'Idempotency-Key': `peel-demo-${randomBytes(8).toString('hex')}` },
    });
    const status0 = (await submitted.json()) as { id: string; state: string; total: number };
    const batchId = status0.id;
    o.say(
      `accepted (${submitted.status}): batch ${batchId}, ${status0.total} spectra; polling ${submitted.headers.get('location') ?? ''}`,
    );

    let state = status0.state;
    let lastDone = -1;
    let lastChange = Date.now();
    const stall = o.stallTimeoutMs ?? 120_000;
    for (;;) {
      const s = (await (await call(`/v1/batches/${batchId}`)).json()) as {
        state: string;
        total: number;
        processed: number;
        counts: { annotated: number; unassigned: number; error: number };
      };
      state = s.state;
      o.progress.update(
        {
          done: s.processed,
          total: s.total,
          annotated: s.counts.annotated,
          unassigned: s.counts.unassigned,
          errors: s.counts.error,
        },
        s.state,
      );
      if (s.state === 'completed' || s.state === 'failed' || s.state === 'cancelled') break;
      if (s.processed !== lastDone) {
        lastDone = s.processed;
        lastChange = Date.now();
      } else if (Date.now() - lastChange > stall) {
        throw new DemoError(
          `batch ${batchId} made no progress for ${Math.round(stall / 1000)} s (state ${s.state})`,
          'batch',
        );
      }
      await sleep(150, o.signal);
      if (o.signal?.aborted) throw new DemoError('stopped', 'aborted');
    }
    o.progress.clear();
    o.say(`batch ${batchId} ${state}; fetching results as JSON, CSV and mzTab-M …`);

    const results = `/v1/batches/${batchId}/results`;
    const [json, csv, mztab] = await Promise.all(
      (['json', 'csv', 'mztab'] as const).map(async (f) => (await call(`${results}?format=${f}`)).text()),
    );
    let document: ResultsDocument;
    try {
      document = JSON.parse(json) as ResultsDocument;
    } catch (err) {
      throw new DemoError('the JSON results are not valid JSON', 'http', { cause: err });
    }
    out = { document, texts: { json, csv, mztab }, batchId, state, keyPrefix: prefix, port: service.port };
  } finally {
    o.progress.clear();
    if (service) {
      await service
        .close()
        .catch((err: unknown) =>
          o.say(`warning: the service did not close cleanly: ${(err as Error).message}`),
        );
      o.say('service stopped (HTTP server, workers, queues and Redis connections closed)');
    }
    try {
      keysDeleted = await deleteKeys(o.redisUrl, prefix);
      o.say(`deleted the demo's ${keysDeleted} Redis keys (${prefix}*)`);
    } catch (err) {
      o.say(`warning: could not delete the demo's Redis keys ${prefix}*: ${(err as Error).message}`);
    }
  }
  return { ...out, keysDeleted };
}
