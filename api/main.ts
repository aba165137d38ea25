#!/usr/bin/env node
// Entry point of the HTTP API (`npm run start:api`); with `--with-workers` it also runs the scoring and
// webhook workers in this process tree (`npm start`: one machine). The only place the API reads the environment.
import type { Server } from 'node:http';
import { pino } from 'pino';
import { defaultRuleSetPath, loadRuleSetFile } from '../formats/ruleset-file.js';
import { peelVersion } from '../formats/package-root.js';
import { checkEvictionPolicy, connectRedis, createRedis } from '../store/redis.js';
import { createStore } from '../store/store.js';
import { createScoreQueue, createWebhookQueue } from '../worker/queues.js';
import { queueSettings, startWorkers, type WorkerRuntime } from '../worker/runtime.js';
import { createApp } from './app.js';
import { ConfigError, parseConfig } from './config.js';
import { createMetrics } from './metrics.js';

async function main(): Promise<void> {
  const config = parseConfig(process.env);
  const withWorkers = process.argv.includes('--with-workers');
  const logger = pino({
    level: config.LOG_LEVEL,
    base: { service: withWorkers ? 'peel' : 'peel-api' },
    redact: ['req.headers.authorization', '*.secret', '*.apiKey'],
  });
  const redis = createRedis(config.REDIS_URL, 'producer');
  try {
    await connectRedis(redis);
  } catch (err) {
    throw Object.assign(new Error(`cannot reach Redis at ${redactUrl(config.REDIS_URL)}: ${(err as Error).message}`), {
      code: 'redis-unreachable',
    });
  }
  await checkEvictionPolicy(redis, config.EVICTION_POLICY_CHECK, (m) => logger.warn(m));
  const store = createStore({ redis, prefix: config.KEY_PREFIX });

  const rulesPath = config.RULESET_PATH ?? defaultRuleSetPath();
  const loaded = await loadRuleSetFile(rulesPath);
  if (!loaded.value || !loaded.sha256) {
    throw Object.assign(new Error(`rule set ${rulesPath} is not valid: ${loaded.errors.map((e) => e.message).join('; ')}`), {
      code: 'invalid-ruleset',
    });
  }
  await store.putRuleSet(loaded.sha256, loaded.value);
  const activated = await store.activateRuleSet(loaded.sha256, true);
  logger.info({ ruleset: loaded.ref, activated }, activated ? 'rule set registered and activated' : 'rule set registered');

  const qs = queueSettings(config);
  const scoreQueue = createScoreQueue(redis, qs);
  const webhookQueue = createWebhookQueue(redis, qs);
  const metrics = createMetrics();
  metrics.watchQueue(scoreQueue);
  metrics.watchQueue(webhookQueue);
  let workers: WorkerRuntime | undefined;
  if (withWorkers) workers = await startWorkers({ config, logger, metrics, engineVersion: peelVersion() });
  if (config.API_KEYS.length === 0) {
    logger.warn('API_KEYS is empty: no client can authenticate (make a key with `node dist/api/keygen.js CLIENT`)');
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
  const server: Server = await new Promise((resolve) => {
    const s = app.listen(config.PORT, config.HOST, () => resolve(s));
  });
  // Large uploads stream for a while; keep the default header timeout but allow long bodies.
  server.requestTimeout = 30 * 60_000;
  const addr = server.address();
  logger.info({ port: typeof addr === 'object' && addr ? addr.port : config.PORT, withWorkers }, 'API listening');

  let closing = false;
  const shutdown = async (signal: string) => {
    if (closing) return;
    closing = true;
    logger.info({ signal }, 'shutting down: finishing requests and running jobs');
    const hard = setTimeout(() => process.exit(1), 60_000);
    hard.unref();
    await new Promise<void>((resolve) => server.close(() => resolve()));
    await workers?.close();
    await Promise.all([scoreQueue.close(), webhookQueue.close()]);
    await redis.quit().catch(() => {});
    logger.info('stopped');
    process.exit(0);
  };
  process.on('SIGTERM', () => void shutdown('SIGTERM'));
  process.on('SIGINT', () => void shutdown('SIGINT'));
}

function redactUrl(url: string): string {
  return url.replace(/\/\/[^@/]*@/, '//***@');
}

main().catch((err: unknown) => {
  const e = err as Error & { code?: string };
  if (e instanceof ConfigError || e?.code) console.error(`peel: ${e.message}`);
  else console.error('peel: failed to start', err);
  process.exit(1);
});
