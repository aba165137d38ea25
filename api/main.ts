#!/usr/bin/env node
// Entry point of the HTTP API (`npm run start:api`); with `--with-workers` it also runs the scoring and
// webhook workers in this process tree (`npm start`: one machine). The only place the API reads the environment.
import { pino } from 'pino';
import { ConfigError, parseConfig } from './config.js';
import { startService } from './service.js';

async function main(): Promise<void> {
  const config = parseConfig(process.env);
  const withWorkers = process.argv.includes('--with-workers');
  const logger = pino({
    level: config.LOG_LEVEL,
    base: { service: withWorkers ? 'peel' : 'peel-api' },
    redact: ['req.headers.authorization', '*.secret', '*.apiKey'],
  });
  const service = await startService({ config, logger, withWorkers });
  let closing = false;
  const shutdown = async (signal: string) => {
    if (closing) return;
    closing = true;
    logger.info({ signal }, 'shutting down: finishing requests and running jobs');
    const hard = setTimeout(() => process.exit(1), 60_000);
    hard.unref();
    await service.close();
    logger.info('stopped');
    process.exit(0);
  };
  process.on('SIGTERM', () => void shutdown('SIGTERM'));
  process.on('SIGINT', () => void shutdown('SIGINT'));
}

main().catch((err: unknown) => {
  const e = err as Error & { code?: string };
  if (e instanceof ConfigError || e?.code) console.error(`peel: ${e.message}`);
  else console.error('peel: failed to start', err);
  process.exit(1);
});
