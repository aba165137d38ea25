import { fileURLToPath } from 'node:url';
import { type Job, Worker } from 'bullmq';
import type { Redis } from 'ioredis';
import type { Logger } from 'pino';
import type { Metrics } from '../api/metrics.js';
import type { Store } from '../store/store.js';
import {
  type QueueSettings,
  SCORE_QUEUE,
  type ScoreJobData,
  type ScoreJobResult,
  WEBHOOK_QUEUE,
  type WebhookJobData,
} from './queues.js';
import type { SandboxSettings } from './sandbox-processor.js';
import { errorResult } from './score-processor.js';
import { createWebhookProcessor, enqueueBatchEvent } from './webhooks.js';
import type { Queue } from 'bullmq';

/** Options of {@link createScoreWorker}. */
export interface ScoreWorkerOptions {
  /** Blocking connection for BullMQ (`maxRetriesPerRequest: null`); duplicated for the worker's needs. */
  connection: Redis;
  store: Store;
  webhookQueue: Queue<WebhookJobData>;
  logger: Logger;
  metrics?: Metrics;
  redisUrl: string;
  queue: QueueSettings;
  engineVersion: string;
  cacheTtlSeconds: number;
  /** Jobs at once, each in its own worker thread. @defaultValue 2 */
  concurrency?: number;
  /** @defaultValue 30000 */
  lockDurationMs?: number;
  /** @defaultValue 30000 */
  stalledIntervalMs?: number;
  /** Built processor file. @defaultValue dist/worker/score-sandbox.js beside this module */
  processorFile?: string;
}

/** Path of the built sandboxed processor next to this module (in `dist/`). */
export function defaultProcessorFile(): string {
  const here = fileURLToPath(import.meta.url);
  // From sources (tests run TypeScript directly) point at the build; `npm test` builds first.
  return here.endsWith('.ts')
    ? fileURLToPath(new URL('../dist/worker/score-sandbox.js', import.meta.url))
    : fileURLToPath(new URL('./score-sandbox.js', import.meta.url));
}

/**
 * Starts the scoring worker: BullMQ runs each job in a sandboxed worker thread; a job that fails for good
 * (retries spent, or unrecoverable) turns its chunk's unfinished spectra into error results, so the batch
 * still finishes and nothing accepted is silently lost.
 */
export function createScoreWorker(o: ScoreWorkerOptions): Worker<ScoreJobData, ScoreJobResult> {
  const settings: SandboxSettings = {
    redisUrl: o.redisUrl,
    queue: o.queue,
    engineVersion: o.engineVersion,
    cacheTtlSeconds: o.cacheTtlSeconds,
  };
  const worker = new Worker<ScoreJobData, ScoreJobResult>(
    SCORE_QUEUE,
    o.processorFile ?? defaultProcessorFile(),
    {
      connection: o.connection,
      prefix: o.queue.prefix,
      concurrency: o.concurrency ?? 2,
      useWorkerThreads: true,
      workerThreadsOptions: { workerData: settings },
      lockDuration: o.lockDurationMs ?? 30_000,
      stalledInterval: o.stalledIntervalMs ?? 30_000,
      maxStalledCount: 2,
      removeOnComplete: { count: o.queue.keepCompleted },
      removeOnFail: { count: o.queue.keepFailed },
    },
  );
  worker.on('completed', (job) => {
    const r = job.returnvalue;
    o.metrics?.chunkJobs.inc({ outcome: 'completed' });
    if (!r) return;
    o.metrics?.chunkDuration.observe(r.durationMs / 1000);
    for (const origin of ['computed', 'cached'] as const) {
      for (const [status, n] of Object.entries(r.byStatus[origin]))
        o.metrics?.spectraProcessed.inc({ status, origin }, n);
    }
    if (r.finished) o.logger.info({ batchId: job.data.batchId, state: r.finished }, 'batch finished');
  });
  worker.on('failed', (job, err) => {
    if (!job) return;
    void onFailed(o, job, err).catch((e) =>
      o.logger.error({ err: e, jobId: job.id }, 'could not record a failed scoring job'),
    );
  });
  worker.on('error', (err) => o.logger.error({ err }, 'scoring worker error'));
  return worker;
}

async function onFailed(o: ScoreWorkerOptions, job: Job<ScoreJobData>, err: Error): Promise<void> {
  const final = await job.isFailed();
  o.metrics?.chunkJobs.inc({ outcome: final ? 'failed' : 'retried' });
  o.logger.warn(
    {
      batchId: job.data.batchId,
      jobId: job.id,
      attempt: job.attemptsMade,
      final,
      err: { name: err.name, message: err.message },
    },
    final ? 'scoring job failed for good' : 'scoring job failed; will retry',
  );
  if (!final) return;
  const { batchId, start, end } = job.data;
  const items = await o.store.getItems(batchId, start, end);
  const outcome = await o.store.markResults(
    batchId,
    items.map((i) => ({
      index: i.index,
      result: {
        ...errorResult(i.id, 'processing-failed', 'this spectrum could not be processed'),
        index: i.index,
      },
    })),
    true,
  );
  if (outcome.finished) await enqueueBatchEvent(o.store, o.webhookQueue, batchId);
}

/** Options of {@link createWebhookWorker}. */
export interface WebhookWorkerOptions {
  connection: Redis;
  store: Store;
  logger: Logger;
  metrics?: Metrics;
  queue: QueueSettings;
  timeoutMs: number;
  /** Deliveries at once. @defaultValue 10 */
  concurrency?: number;
}

/** Starts the webhook delivery worker (I/O only, so it runs on the main thread). */
export function createWebhookWorker(o: WebhookWorkerOptions): Worker<WebhookJobData> {
  const deliver = createWebhookProcessor({
    store: o.store,
    timeoutMs: o.timeoutMs,
    onAttempt(ok, seconds) {
      o.metrics?.webhookDeliveries.inc({ outcome: ok ? 'delivered' : 'failed' });
      o.metrics?.webhookDuration.observe(seconds);
    },
  });
  const worker = new Worker<WebhookJobData>(WEBHOOK_QUEUE, (job) => deliver(job), {
    connection: o.connection,
    prefix: o.queue.prefix,
    concurrency: o.concurrency ?? 10,
    removeOnComplete: { count: o.queue.keepCompleted },
    removeOnFail: { count: o.queue.keepFailed },
  });
  worker.on('failed', (job, err) => {
    if (job)
      o.logger.warn(
        { batchId: job.data.batchId, attempt: job.attemptsMade, err: err.message },
        'webhook attempt failed',
      );
  });
  worker.on('error', (err) => o.logger.error({ err }, 'webhook worker error'));
  return worker;
}
