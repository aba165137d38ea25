import type { Server } from 'node:http';
import type { Logger } from 'pino';
import { engineVersion } from '../worker/engine-version.js';
import { defaultRuleSetPath, loadRuleSetFile } from '../formats/ruleset-file.js';
import { checkEvictionPolicy, connectRedis, createRedis } from '../store/redis.js';
import { createStore } from '../store/store.js';
import { createScoreQueue, createWebhookQueue } from '../worker/queues.js';
import { queueSettings, startWorkers, type WorkerRuntime } from '../worker/runtime.js';
import { createApp } from './app.js';
import type { ServiceConfig } from './config.js';
import { createMetrics } from './metrics.js';

/** Options of {@link startService}. */
export interface StartServiceOptions {
  config: ServiceConfig;
  logger: Logger;
  /** Also run the scoring and webhook workers in this process. @defaultValue false */
  withWorkers?: boolean;
  /** Another sandboxed processor module (benchmarks). @defaultValue the built score-sandbox */
  processorFile?: string;
}

/** A running API (and workers); `close()` stops taking requests, lets jobs finish and disconnects. */
export interface RunningService {
  server: Server;
  port: number;
  close(): Promise<void>;
}

/**
 * Starts the API as `npm start` / `npm run start:api` do: connects to Redis (failing fast with a clear
 * message), checks its eviction policy, registers the configured rule set (activating it if none is active),
 * and listens.
 */
export async function startService(o: StartServiceOptions): Promise<RunningService> {
  const { config, logger } = o;
  const redis = createRedis(config.REDIS_URL, 'producer');
  try {
    await connectRedis(redis);
  } catch (err) {
    throw Object.assign(
      new Error(`cannot reach Redis at ${redactUrl(config.REDIS_URL)}: ${(err as Error).message}`),
      {
        code: 'redis-unreachable',
      },
    );
  }
  await checkEvictionPolicy(redis, config.EVICTION_POLICY_CHECK, (m) => logger.warn(m));
  const store = createStore({ redis, prefix: config.KEY_PREFIX });

  const rulesPath = config.RULESET_PATH ?? defaultRuleSetPath();
  const loaded = await loadRuleSetFile(rulesPath);
  if (!loaded.value || !loaded.sha256) {
    throw Object.assign(
      new Error(`rule set ${rulesPath} is not valid: ${loaded.errors.map((e) => e.message).join('; ')}`),
      {
        code: 'invalid-ruleset',
      },
    );
  }
  await store.putRuleSet(loaded.sha256, loaded.value);
  const activated = await store.activateRuleSet(loaded.sha256, true);
  logger.info(
    { ruleset: loaded.ref, activated },
    activated ? 'rule set registered and activated' : 'rule set registered',
  );

  const qs = queueSettings(config);
  const scoreQueue = createScoreQueue(redis, qs);
  const webhookQueue = createWebhookQueue(redis, qs);
  const metrics = createMetrics();
  metrics.watchQueue(scoreQueue);
  metrics.watchQueue(webhookQueue);
  let workers: WorkerRuntime | undefined;
  if (o.withWorkers) {
    workers = await startWorkers({
      config,
      logger,
      metrics,
      engineVersion: engineVersion(),
      ...(o.processorFile ? { processorFile: o.processorFile } : {}),
    });
  }
  if (config.API_KEYS.length === 0) {
    logger.warn(
      'API_KEYS is empty: no client can authenticate (make a key with `node dist/api/keygen.js CLIENT`)',
    );
  }

  const app = createApp({
    store,
    scoreQueue,
    webhookQueue,
    logger,
    metrics,
    apiKeys: config.API_KEYS,
    limits: {
      jsonBody: config.BODY_LIMIT_JSON,
      uploadBody: config.BODY_LIMIT_UPLOAD,
      rulesetBody: config.BODY_LIMIT_RULESET,
      maxBatchSpectra: config.MAX_BATCH_SPECTRA,
      chunkSize: config.CHUNK_SIZE,
      ratePerMinute: config.RATE_LIMIT_PER_MINUTE,
      idempotencyTtlSeconds: config.IDEMPOTENCY_TTL_SECONDS,
      webhookAllowHttp: config.WEBHOOK_ALLOW_HTTP,
    },
  });
  if (config.TRUST_PROXY > 0) app.set('trust proxy', config.TRUST_PROXY);
  const server: Server = await new Promise((resolve, reject) => {
    const s = app.listen(config.PORT, config.HOST, () => resolve(s));
    s.once('error', reject);
  });
  // Large uploads stream for a while: allow long request bodies (headers keep Node's default timeout).
  server.requestTimeout = 30 * 60_000;
  const addr = server.address();
  const port = typeof addr === 'object' && addr ? addr.port : config.PORT;
  logger.info({ port, withWorkers: !!o.withWorkers }, 'API listening');
  return {
    server,
    port,
    async close() {
      await new Promise<void>((resolve) => server.close(() => resolve()));
      await workers?.close();
      await Promise.all([scoreQueue.close(), webhookQueue.close()]);
      await redis.quit().catch(() => {});
    },
  };
}

function redactUrl(url: string): string {
  return url.replace(/\/\/[^@/]*@/, '//***@');
}
