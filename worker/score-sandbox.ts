// The scoring processor as BullMQ runs it: in a worker thread of its own (`useWorkerThreads`), so CPU-bound
// scoring never blocks the main thread's lock renewal. Settings arrive as `workerData` from the entry point.
import { isMainThread, workerData } from 'node:worker_threads';
import type { Queue } from 'bullmq';
import { compileRuleSet, scoreSpectrum } from '../engine/score/score-spectrum.js';
import { connectRedis, createRedis } from '../store/redis.js';
import { createStore } from '../store/store.js';
import { type QueueSettings, createWebhookQueue, type WebhookJobData } from './queues.js';
import { type ChunkJob, createProcessor } from './score-processor.js';
import { enqueueBatchEvent } from './webhooks.js';

/** What the entry point hands each sandbox thread. */
export interface SandboxSettings {
  redisUrl: string;
  queue: QueueSettings;
  engineVersion: string;
  cacheTtlSeconds: number;
}

let processor: ((job: ChunkJob) => Promise<unknown>) | undefined;

async function init(): Promise<(job: ChunkJob) => Promise<unknown>> {
  if (isMainThread) throw new Error('score-sandbox runs only in a worker thread');
  const s = workerData as SandboxSettings;
  const redis = createRedis(s.redisUrl, 'worker');
  await connectRedis(redis);
  const store = createStore({ redis, prefix: s.queue.prefix });
  let webhooks: Queue<WebhookJobData> | undefined;
  return createProcessor({
    store,
    engine: { compileRuleSet, scoreSpectrum },
    engineVersion: s.engineVersion,
    cacheTtlSeconds: s.cacheTtlSeconds,
    async onBatchFinished(batchId) {
      webhooks ??= createWebhookQueue(redis, s.queue);
      await enqueueBatchEvent(store, webhooks, batchId);
    },
  });
}

/** Processes one scoring job (BullMQ calls the default export). */
export default async function (job: ChunkJob): Promise<unknown> {
  processor ??= await init();
  return processor(job);
}
