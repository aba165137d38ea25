// Starts API + workers for the e2e benchmark, like `npm start` but with an optional other sandboxed
// processor (`--processor FILE`). Prints `{"port":N}` once listening; SIGTERM stops it gracefully.
import { pino } from 'pino';
import { parseConfig } from '../api/config.js';
import { startService } from '../api/service.js';

const i = process.argv.indexOf('--processor');
const processorFile = i > 0 ? process.argv[i + 1] : undefined;
const config = parseConfig(process.env);
const logger = pino({ level: config.LOG_LEVEL });
const service = await startService({
  config,
  logger,
  withWorkers: true,
  ...(processorFile ? { processorFile } : {}),
});
process.stdout.write(`${JSON.stringify({ port: service.port })}\n`);
process.on('SIGTERM', () => {
  void service.close().then(() => process.exit(0));
});
