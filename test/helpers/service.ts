import type { Express } from 'express';
import { pino } from 'pino';
import { createApp } from '../../api/app.js';
import { type ApiKeyEntry, hashApiKey } from '../../api/auth.js';
import { parseConfig, type ServiceConfig } from '../../api/config.js';
import type { AppLimits } from '../../api/context.js';
import { createMetrics, type Metrics } from '../../api/metrics.js';
import { loadDefaultRuleSet } from '../../formats/ruleset-file.js';
import { connectRedis, createRedis } from '../../store/redis.js';
import { createStore, type Store } from '../../store/store.js';
import { createScoreQueue, createWebhookQueue } from '../../worker/queues.js';
import { queueSettings, startWorkers, type WorkerRuntime } from '../../worker/runtime.js';

/** API keys of the test clients. */
export const KEYS = {
  alpha: 'pk_test_alpha_0123456789abcdef',
  beta: 'pk_test_beta_0123456789abcdef',
  admin: 'pk_test_admin_0123456789abcdef',
} as const;

/** Authorization header for a test client. */
export const auth = (who: keyof typeof KEYS) => ({ Authorization: `Bearer ${KEYS[who]}` });

const API_KEYS: ApiKeyEntry[] = [
  { clientId: 'alpha-lab', role: 'client', hash: hashApiKey(KEYS.alpha) },
  { clientId: 'beta-lab', role: 'client', hash: hashApiKey(KEYS.beta) },
  { clientId: 'ops', role: 'admin', hash: hashApiKey(KEYS.admin) },
];

/** A whole service on a real Redis, in this process: app (not listening), store, queues, and optionally workers. */
export interface TestService {
  app: Express;
  store: Store;
  config: ServiceConfig;
  metrics: Metrics;
  workers: WorkerRuntime | undefined;
  rulesetSha: string;
  startWorkers(): Promise<WorkerRuntime>;
  close(): Promise<void>;
}

/** Builds a service with the real default rule set; `env` overrides configuration variables. */
export async function startTestService(opts: {
  url: string;
  prefix: string;
  env?: Record<string, string>;
  limits?: Partial<AppLimits>;
  workers?: boolean;
  /** Another built sandboxed processor module for the scoring worker. */
  processorFile?: string;
}): Promise<TestService> {
  const config = parseConfig({
    REDIS_URL: opts.url,
    KEY_PREFIX: opts.prefix,
    LOG_LEVEL: 'silent',
    WEBHOOK_ALLOW_HTTP: 'true',
    WEBHOOK_BACKOFF_MS: '50',
    JOB_BACKOFF_MS: '50',
    CHUNK_SIZE: '5',
    LOCK_DURATION_MS: '2000',
    STALLED_INTERVAL_MS: '500',
    ...opts.env,
  });
  const logger = pino({ level: process.env.PEEL_TEST_LOG ?? 'silent' });
  const redis = createRedis(config.REDIS_URL, 'producer');
  await connectRedis(redis);
  const store = createStore({ redis, prefix: config.KEY_PREFIX });
  const rules = await loadDefaultRuleSet();
  if (!rules.value || !rules.sha256)
    throw new Error(`default rule set invalid: ${JSON.stringify(rules.errors)}`);
  await store.putRuleSet(rules.sha256, rules.value);
  await store.activateRuleSet(rules.sha256);
  const qs = queueSettings(config);
  const scoreQueue = createScoreQueue(redis, qs);
  const webhookQueue = createWebhookQueue(redis, qs);
  const metrics = createMetrics();
  metrics.watchQueue(scoreQueue);
  metrics.watchQueue(webhookQueue);
  const app = createApp({
    store,
    scoreQueue,
    webhookQueue,
    logger,
    metrics,
    apiKeys: API_KEYS,
    limits: {
      chunkSize: config.CHUNK_SIZE,
      webhookAllowHttp: true,
      ratePerMinute: 100_000,
      ...opts.limits,
    },
  });
  const svc: TestService = {
    app,
    store,
    config,
    metrics,
    workers: undefined,
    rulesetSha: rules.sha256,
    async startWorkers() {
      svc.workers ??= await startWorkers({
        config,
        logger,
        metrics,
        engineVersion: 'test',
        ...(opts.processorFile ? { processorFile: opts.processorFile } : {}),
      });
      return svc.workers;
    },
    async close() {
      await svc.workers?.close();
      await Promise.all([scoreQueue.close(), webhookQueue.close()]);
      await store.deleteEverything();
      await redis.quit();
    },
  };
  if (opts.workers !== false) await svc.startWorkers();
  return svc;
}

/** Polls until `check` returns a value, or fails after `ms`. */
export async function waitFor<T>(
  check: () => Promise<T | undefined | null | false>,
  ms = 20_000,
  step = 50,
): Promise<T> {
  const until = Date.now() + ms;
  for (;;) {
    const v = await check();
    if (v) return v;
    if (Date.now() > until) throw new Error('timed out waiting');
    await new Promise((r) => setTimeout(r, step));
  }
}

/** A simulated spectrum (simulated data, not a measurement): a glycoside-like ladder of peaks. */
export function simulatedSpectrum(
  id: string,
  seed = 1,
): {
  id: string;
  precursor: { mz: number; charge: number };
  peaks: Array<[number, number]>;
} {
  const base = 287.05501 + (seed % 7) * 16;
  const peaks: Array<[number, number]> = [
    [base, 100],
    [base + 162.05282, 40 + (seed % 13)],
    [base - 28.0, 5],
    [137.0233 + (seed % 3), 3],
  ];
  return { id, precursor: { mz: base + 162.05282 * 2 - 1e-4 * seed, charge: 1 }, peaks };
}
