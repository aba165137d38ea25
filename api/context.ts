import type { Queue } from 'bullmq';
import type { Logger } from 'pino';
import type { Store } from '../store/store.js';
import type { ScoreJobData, ScoreJobResult, WebhookJobData } from '../worker/queues.js';
import type { ApiKeyEntry } from './auth.js';
import type { Metrics } from './metrics.js';

/** Limits and settings of the HTTP API; every one has a default (see {@link DEFAULT_LIMITS}). */
export interface AppLimits {
  /** Largest JSON batch body, bytes. */
  jsonBody: number;
  /** Largest uploaded file, bytes. */
  uploadBody: number;
  /** Largest rule-set body, bytes. */
  rulesetBody: number;
  /** Most spectra in one batch. */
  maxBatchSpectra: number;
  /** Spectra per scoring job. */
  chunkSize: number;
  /** Requests per client per minute. */
  ratePerMinute: number;
  /** How long an Idempotency-Key is remembered, seconds. */
  idempotencyTtlSeconds: number;
  /** Accept http:// webhook URLs (not only https://). */
  webhookAllowHttp: boolean;
}

/** Defaults of {@link AppLimits} (the same as the configuration's). */
export const DEFAULT_LIMITS: AppLimits = {
  jsonBody: 64 * 1024 ** 2,
  uploadBody: 1024 ** 3,
  rulesetBody: 2 * 1024 ** 2,
  maxBatchSpectra: 200_000,
  chunkSize: 200,
  ratePerMinute: 600,
  idempotencyTtlSeconds: 86_400,
  webhookAllowHttp: false,
};

/** What {@link createApp} is built from. */
export interface AppDeps {
  store: Store;
  /** Scoring queue on a fail-fast (producer) connection. */
  scoreQueue: Queue<ScoreJobData, ScoreJobResult>;
  webhookQueue: Queue<WebhookJobData>;
  logger: Logger;
  apiKeys: readonly ApiKeyEntry[];
  metrics?: Metrics;
  limits?: Partial<AppLimits>;
  /** Readiness check for /readyz. @defaultValue a Redis PING through the store */
  ready?: () => Promise<void>;
}

/** {@link AppDeps} with defaults merged: what the routes see. */
export interface AppContext extends Omit<AppDeps, 'limits'> {
  limits: AppLimits;
}
