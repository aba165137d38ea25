import { Queue } from 'bullmq';
import type { Redis } from 'ioredis';

/** Name of the scoring queue (one job per chunk of a batch). */
export const SCORE_QUEUE = 'score';
/** Name of the webhook delivery queue. */
export const WEBHOOK_QUEUE = 'webhooks';

/** Data of a scoring job: a reference to a chunk of a batch, never the spectra themselves. */
export interface ScoreJobData {
  batchId: string;
  /** First index of the chunk. */
  start: number;
  /** Last index of the chunk (inclusive). */
  end: number;
}

/** What a scoring job returns (kept in the finished job for a while; also feeds the metrics). */
export interface ScoreJobResult {
  scored: number;
  cached: number;
  skipped: number;
  /** Results per status, split by whether they were computed now or served from the result cache. */
  byStatus: { computed: Record<string, number>; cached: Record<string, number> };
  /** Set when this job finished the batch. */
  finished: string | null;
  durationMs: number;
}

/** Data of a webhook delivery job. */
export interface WebhookJobData {
  clientId: string;
  batchId: string;
  /** `webhook-id`: the same on every retry, so receivers can drop duplicates. */
  webhookId: string;
  event: string;
  /** The exact body signed and sent. */
  body: string;
}

/** Queue settings shared by the producers (API) and the workers. */
export interface QueueSettings {
  prefix: string;
  jobAttempts: number;
  jobBackoffMs: number;
  keepCompleted: number;
  keepFailed: number;
  webhookAttempts: number;
  webhookBackoffMs: number;
}

/** The scoring queue for producers; `connection` should fail fast (see `createRedis(…, 'producer')`). */
export function createScoreQueue(connection: Redis, s: QueueSettings): Queue<ScoreJobData, ScoreJobResult> {
  return new Queue<ScoreJobData, ScoreJobResult>(SCORE_QUEUE, {
    connection,
    prefix: s.prefix,
    skipWaitingForReady: true,
    defaultJobOptions: {
      attempts: s.jobAttempts,
      backoff: { type: 'exponential', delay: s.jobBackoffMs, jitter: 0.5 },
      removeOnComplete: { count: s.keepCompleted },
      removeOnFail: { count: s.keepFailed },
    },
  });
}

/** The webhook delivery queue: retries with exponential backoff and full jitter. */
export function createWebhookQueue(connection: Redis, s: QueueSettings): Queue<WebhookJobData> {
  return new Queue<WebhookJobData>(WEBHOOK_QUEUE, {
    connection,
    prefix: s.prefix,
    skipWaitingForReady: true,
    defaultJobOptions: {
      attempts: s.webhookAttempts,
      backoff: { type: 'exponential', delay: s.webhookBackoffMs, jitter: 1 },
      removeOnComplete: { count: s.keepCompleted },
      removeOnFail: { count: s.keepFailed },
    },
  });
}

/** Job id of chunk `n` of a batch (no `:` — BullMQ uses it as a key separator). */
export function chunkJobId(batchId: string, n: number): string {
  return `${batchId}-c${n}`;
}
