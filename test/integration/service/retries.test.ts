import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestRedis, type TestRedis, testPrefix } from '../../helpers/redis.js';
import {
  auth,
  simulatedSpectrum,
  startTestService,
  type TestService,
  waitFor,
} from '../../helpers/service.js';

// Scoring jobs that fail: a transient fault is retried (with backoff) and the batch completes; a chunk that
// keeps failing ends as `processing-failed` error results for its spectra and the batch as `failed`, so no
// accepted spectrum is ever silently missing. Processors wrap the built one (dist/), as `npm test` builds first.

let redis: TestRedis;
let dir: string;
const real = pathToFileURL(resolve('dist/worker/score-sandbox.js')).href;
const env = { CHUNK_SIZE: '5', JOB_ATTEMPTS: '3', JOB_BACKOFF_MS: '50' };

function processor(name: string, body: string): string {
  const file = join(dir, `${name}.mjs`);
  writeFileSync(
    file,
    `import processChunk from ${JSON.stringify(real)};\nexport default async function (job) {\n${body}\n  return processChunk(job);\n}\n`,
  );
  return file;
}

beforeAll(async () => {
  redis = await startTestRedis();
  dir = mkdtempSync(join(tmpdir(), 'peel-retries-'));
});
afterAll(async () => {
  await redis?.stop();
  rmSync(dir, { recursive: true, force: true });
});

async function run(svc: TestService, n: number) {
  const spectra = Array.from({ length: n }, (_, i) => simulatedSpectrum(`F${i}`, i));
  const sub = await request(svc.app).post('/v1/batches').set(auth('alpha')).send({ spectra });
  expect(sub.status).toBe(202);
  const done = await waitFor(async () => {
    const b = await svc.store.getBatch(sub.body.id);
    return b && ['completed', 'failed'].includes(b.state) ? b : null;
  }, 60_000);
  const res = await request(svc.app).get(`/v1/batches/${sub.body.id}/results`).set(auth('alpha'));
  return {
    done,
    spectra: res.body.spectra as Array<{ id: string; status: string; reason?: { code: string } }>,
  };
}

describe('failing scoring jobs', () => {
  it('a transient fault is retried and the batch completes', async () => {
    const svc = await startTestService({
      url: redis.url,
      prefix: testPrefix('retry'),
      env,
      processorFile: processor(
        'flaky',
        "  if (job.data.start === 0 && job.attemptsMade < 2) throw new Error('simulated transient fault');",
      ),
    });
    try {
      const { done, spectra } = await run(svc, 12);
      expect(done.state).toBe('completed');
      expect(spectra.map((s) => s.id)).toEqual(Array.from({ length: 12 }, (_, i) => `F${i}`));
      expect(spectra.some((s) => s.reason?.code === 'processing-failed')).toBe(false);
      const retried = (await svc.metrics.chunkJobs.get()).values.find((v) => v.labels.outcome === 'retried');
      expect(retried?.value).toBe(2);
    } finally {
      await svc.close();
    }
  });

  it('a chunk that keeps failing becomes error results; the batch ends `failed`, nothing missing', async () => {
    const svc = await startTestService({
      url: redis.url,
      prefix: testPrefix('broken'),
      env,
      processorFile: processor(
        'broken',
        "  if (job.data.start === 5) throw new Error('simulated permanent fault');",
      ),
    });
    try {
      const { done, spectra } = await run(svc, 12);
      expect(done.state).toBe('failed');
      expect(done.processed).toBe(12);
      expect(spectra.map((s) => s.id)).toEqual(Array.from({ length: 12 }, (_, i) => `F${i}`));
      const failed = spectra.filter((s) => s.reason?.code === 'processing-failed').map((s) => s.id);
      expect(failed).toEqual(['F5', 'F6', 'F7', 'F8', 'F9']);
    } finally {
      await svc.close();
    }
  });
});
