import { isMainThread, workerData } from 'node:worker_threads';
import type { Queue } from 'bullmq';
import { connectRedis, createRedis } from '../store/redis.js';
import { createStore } from '../store/store.js';
import { createWebhookQueue, type QueueSettings, type WebhookJobData } from './queues.js';
import { type ChunkJob, createProcessor, type ScoringEngine } from './score-processor.js';
import { enqueueBatchEvent } from './webhooks.js';

/** What the entry point hands each sandbox thread (as `workerData`). */
export interface SandboxSettings {
  redisUrl: string;
  queue: QueueSettings;
  engineVersion: string;
  cacheTtlSeconds: number;
}

async function init(engine: ScoringEngine): Promise<(job: ChunkJob) => Promise<unknown>> {
  if (isMainThread) throw new Error('a sandboxed processor runs only in a worker thread');
  const s = workerData as SandboxSettings;
  const redis = createRedis(s.redisUrl, 'worker');
  await connectRedis(redis);
  const store = createStore({ redis, prefix: s.queue.prefix });
  let webhooks: Queue<WebhookJobData> | undefined;
  return createProcessor({
    store,
    engine,
    engineVersion: s.engineVersion,
    cacheTtlSeconds: s.cacheTtlSeconds,
    async onBatchFinished(batchId) {
      webhooks ??= createWebhookQueue(redis, s.queue);
      await enqueueBatchEvent(store, webhooks, batchId);
    },
  });
}

/**
 * A sandboxed processor around an engine, for a module BullMQ runs in a worker thread: its Redis connection
 * and store are set up once per thread, on the first job (again after a failed set-up).
 */
export function sandboxProcessor(engine: ScoringEngine): (job: ChunkJob) => Promise<unknown> {
  let processor: Promise<(job: ChunkJob) => Promise<unknown>> | undefined;
  return async (job) => {
    processor ??= init(engine).catch((err) => {
      processor = undefined; // Redis may come back: try again on the next job.
      throw err;
    });
    return (await processor)(job);
  };
}
