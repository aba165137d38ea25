import type { Logger } from 'pino';
import type { ServiceConfig } from '../api/config.js';
import type { Metrics } from '../api/metrics.js';
import { connectRedis, createRedis } from '../store/redis.js';
import { createStore } from '../store/store.js';
import { createWebhookQueue, type QueueSettings } from './queues.js';
import { createScoreWorker, createWebhookWorker } from './score-worker.js';

/** Queue settings from the service configuration. */
export function queueSettings(c: ServiceConfig): QueueSettings {
  return {
    prefix: c.KEY_PREFIX,
    jobAttempts: c.JOB_ATTEMPTS,
    jobBackoffMs: c.JOB_BACKOFF_MS,
    keepCompleted: c.KEEP_COMPLETED_JOBS,
    keepFailed: c.KEEP_FAILED_JOBS,
    webhookAttempts: c.WEBHOOK_ATTEMPTS,
    webhookBackoffMs: c.WEBHOOK_BACKOFF_MS,
  };
}

/** Running workers; `close()` lets active jobs finish, then disconnects. */
export interface WorkerRuntime {
  close(): Promise<void>;
  /** Answers when Redis does (for /readyz). */
  ping(): Promise<void>;
}

/** Options of {@link startWorkers}. */
export interface StartWorkersOptions {
  config: ServiceConfig;
  logger: Logger;
  metrics?: Metrics;
  engineVersion: string;
  /** Override of the built sandboxed processor file (tests). */
  processorFile?: string;
}

/** Starts the scoring and webhook workers against the configured Redis. */
export async function startWorkers(o: StartWorkersOptions): Promise<WorkerRuntime> {
  const c = o.config;
  const qs = queueSettings(c);
  const connection = createRedis(c.REDIS_URL, 'worker');
  await connectRedis(connection);
  const store = createStore({ redis: connection, prefix: c.KEY_PREFIX });
  const webhookQueue = createWebhookQueue(connection, qs);
  o.metrics?.watchQueue(webhookQueue);
  const score = createScoreWorker({
    connection,
    store,
    webhookQueue,
    logger: o.logger,
    ...(o.metrics ? { metrics: o.metrics } : {}),
    redisUrl: c.REDIS_URL,
    queue: qs,
    engineVersion: o.engineVersion,
    cacheTtlSeconds: c.RESULT_CACHE_DAYS * 86_400,
    concurrency: c.WORKER_CONCURRENCY,
    lockDurationMs: c.LOCK_DURATION_MS,
    stalledIntervalMs: c.STALLED_INTERVAL_MS,
    ...(o.processorFile ? { processorFile: o.processorFile } : {}),
  });
  const webhooks = createWebhookWorker({
    connection,
    store,
    logger: o.logger,
    ...(o.metrics ? { metrics: o.metrics } : {}),
    queue: qs,
    timeoutMs: c.WEBHOOK_TIMEOUT_MS,
  });
  o.logger.info({ concurrency: c.WORKER_CONCURRENCY, prefix: c.KEY_PREFIX }, 'workers started');
  return {
    async close() {
      await Promise.all([score.close(), webhooks.close()]);
      await webhookQueue.close();
      connection.disconnect();
    },
    async ping() {
      await connection.ping();
    },
  };
}
