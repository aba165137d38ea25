import { type ChildProcess, spawn } from 'node:child_process';
import { createRequire } from 'node:module';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { Queue } from 'bullmq';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createRedis } from '../../../store/redis.js';
import { SCORE_QUEUE } from '../../../worker/queues.js';
import { startTestRedis, type TestRedis, testPrefix } from '../../helpers/redis.js';
import {
  auth,
  simulatedSpectrum,
  startTestService,
  type TestService,
  waitFor,
} from '../../helpers/service.js';

// A worker process killed with SIGKILL mid-batch: its jobs' locks lapse, another worker's stalled-job check
// puts them back in the queue, and the batch completes with every spectrum exactly once.
// Uses the built worker (dist/), as `npm test` builds first.

const DIST = resolve('dist');
let redis: TestRedis;
let svc: TestService;
let dir: string;
let child: ChildProcess | undefined;
const prefix = testPrefix('crash');
const env = {
  CHUNK_SIZE: '10',
  LOCK_DURATION_MS: '1000',
  STALLED_INTERVAL_MS: '300',
  WORKER_CONCURRENCY: '2',
};

beforeAll(async () => {
  redis = await startTestRedis();
  svc = await startTestService({ url: redis.url, prefix, env, workers: false });
  dir = mkdtempSync(join(tmpdir(), 'peel-crash-'));
  // A processor that takes a while per chunk, so the kill lands mid-batch whatever the engine's speed.
  writeFileSync(
    join(dir, 'slow-processor.mjs'),
    `import processChunk from ${JSON.stringify(pathToFileURL(join(DIST, 'worker/score-sandbox.js')).href)};
export default async function (job) {
  await new Promise((r) => setTimeout(r, 400));
  return processChunk(job);
}
`,
  );
  writeFileSync(
    join(dir, 'worker.mjs'),
    `import { pino } from ${JSON.stringify(pathToFileURL(createRequire(import.meta.url).resolve('pino')).href)};
import { parseConfig } from ${JSON.stringify(pathToFileURL(join(DIST, 'api/config.js')).href)};
import { startWorkers } from ${JSON.stringify(pathToFileURL(join(DIST, 'worker/runtime.js')).href)};
await startWorkers({
  config: parseConfig(process.env),
  logger: pino({ level: 'silent' }),
  engineVersion: 'test',
  processorFile: ${JSON.stringify(join(dir, 'slow-processor.mjs'))},
});
process.send?.('ready');
`,
  );
});
afterAll(async () => {
  child?.kill('SIGKILL');
  await svc?.close();
  await redis?.stop();
  rmSync(dir, { recursive: true, force: true });
});

describe('a worker killed mid-batch', () => {
  it('the batch still completes via stalled-job recovery, every spectrum exactly once', async () => {
    child = spawn(process.execPath, [join(dir, 'worker.mjs')], {
      cwd: resolve('.'),
      env: { ...process.env, REDIS_URL: redis.url, KEY_PREFIX: prefix, LOG_LEVEL: 'silent', ...env },
      stdio: ['ignore', 'inherit', 'inherit', 'ipc'],
    });
    await new Promise<void>((ok, fail) => {
      child!.once('message', () => ok());
      child!.once('exit', (code) => fail(new Error(`worker exited early (${code})`)));
    });

    const spectra = Array.from({ length: 120 }, (_, i) => simulatedSpectrum(`K${i}`, i));
    const sub = await request(svc.app).post('/v1/batches').set(auth('alpha')).send({ spectra });
    expect(sub.status).toBe(202);
    const id = sub.body.id as string;

    const conn = createRedis(redis.url, 'worker');
    const queue = new Queue(SCORE_QUEUE, { connection: conn, prefix });
    try {
      // Kill once some chunks are done and others are running.
      await waitFor(
        async () => {
          const b = await svc.store.getBatch(id);
          return b && b.processed >= 20 && (await queue.getActiveCount()) > 0;
        },
        60_000,
        20,
      );
      child.kill('SIGKILL');
      await new Promise((r) => child!.once('exit', r));
      // What the dead worker held: still marked active, with nobody left to finish it.
      const orphaned = (await queue.getActive()).map((j) => j.id!);
      expect(orphaned.length).toBeGreaterThan(0);
      const atKill = await svc.store.getBatch(id);
      expect(atKill!.state).toBe('running');
      expect(atKill!.processed).toBeLessThan(120);

      await svc.startWorkers();
      const done = await waitFor(async () => {
        const b = await svc.store.getBatch(id);
        return b?.state === 'completed' ? b : null;
      }, 90_000);
      expect(done.processed).toBe(120);
      expect(done.counts.annotated + done.counts.unassigned + done.counts.error).toBe(120);

      // The jobs the dead worker held are recovered as stalled and run again (a job whose results were
      // already recorded before the kill runs again harmlessly: results are written once per spectrum).
      await waitFor(async () => {
        const states = await Promise.all(
          orphaned.map(async (jobId) => (await queue.getJob(jobId))?.getState()),
        );
        return states.every((st) => st === 'completed');
      }, 30_000);
      for (const jobId of orphaned)
        expect((await queue.getJob(jobId))?.stalledCounter).toBeGreaterThanOrEqual(1);
      const r = await request(svc.app).get(`/v1/batches/${id}/results`).set(auth('alpha'));
      expect(r.body.spectra.map((s: { id: string }) => s.id)).toEqual(spectra.map((s) => s.id));
      expect(new Set(r.body.spectra.map((s: { index: number }) => s.index)).size).toBe(120);
    } finally {
      await queue.close();
      conn.disconnect();
    }
  }, 150_000);
});
