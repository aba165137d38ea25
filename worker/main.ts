#!/usr/bin/env node
// Entry point of a stand-alone worker (`npm run start:worker`): scoring and webhook workers against the
// configured Redis, plus /livez, /readyz and /metrics on WORKER_METRICS_PORT. The only place it reads the environment.
import { createServer } from 'node:http';
import { pino } from 'pino';
import { ConfigError, parseConfig } from '../api/config.js';
import { createMetrics } from '../api/metrics.js';
import { engineVersion } from './engine-version.js';
import { checkEvictionPolicy, connectRedis, createRedis } from '../store/redis.js';
import { startWorkers } from './runtime.js';

async function main(): Promise<void> {
  const config = parseConfig(process.env);
  const logger = pino({ level: config.LOG_LEVEL, base: { service: 'peel-worker' }, redact: ['*.secret'] });
  const probe = createRedis(config.REDIS_URL, 'producer');
  await connectRedis(probe);
  await checkEvictionPolicy(probe, config.EVICTION_POLICY_CHECK, (m) => logger.warn(m));
  const metrics = createMetrics();
  const runtime = await startWorkers({ config, logger, metrics, engineVersion: engineVersion() });

  const server =
    config.WORKER_METRICS_PORT > 0
      ? createServer(async (req, res) => {
          if (req.url === '/livez') {
            res.writeHead(200, { 'content-type': 'application/json' }).end('{"status":"ok"}');
          } else if (req.url === '/readyz') {
            try {
              await probe.ping();
              res.writeHead(200, { 'content-type': 'application/json' }).end('{"status":"ready"}');
            } catch {
              res.writeHead(503, { 'content-type': 'application/problem+json' }).end(
                JSON.stringify({
                  type: 'urn:peel:problem:store-unavailable',
                  title: 'Storage unavailable',
                  status: 503,
                }),
              );
            }
          } else if (req.url === '/metrics') {
            res
              .writeHead(200, { 'content-type': metrics.registry.contentType })
              .end(await metrics.registry.metrics());
          } else {
            res.writeHead(404).end();
          }
        }).listen(config.WORKER_METRICS_PORT)
      : undefined;

  let closing = false;
  const shutdown = async (signal: string) => {
    if (closing) return;
    closing = true;
    logger.info({ signal }, 'shutting down: letting running jobs finish');
    const hard = setTimeout(() => process.exit(1), 60_000);
    hard.unref();
    server?.close();
    await runtime.close();
    await probe.quit().catch(() => {});
    logger.info('stopped');
    process.exit(0);
  };
  process.on('SIGTERM', () => void shutdown('SIGTERM'));
  process.on('SIGINT', () => void shutdown('SIGINT'));
}

main().catch((err: unknown) => {
  const e = err as Error & { code?: string };
  if (e instanceof ConfigError || e?.code) console.error(`peel-worker: ${e.message}`);
  else console.error('peel-worker: failed to start', err);
  process.exit(1);
});
