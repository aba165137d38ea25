import { readFileSync } from 'node:fs';
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

// Cancellation, rule-set upload/activation and reprocessing. The service starts without workers, so a
// batch can be cancelled before anything is scored; workers start later.

let redis: TestRedis;
let svc: TestService;

beforeAll(async () => {
  redis = await startTestRedis();
  svc = await startTestService({ url: redis.url, prefix: testPrefix('lifecycle'), workers: false });
});
afterAll(async () => {
  await svc?.close();
  await redis?.stop();
});

const state = async (id: string) => (await request(svc.app).get(`/v1/batches/${id}`).set(auth('alpha'))).body;

describe('batch lifecycle', () => {
  let kept: string;

  it('cancel: queued spectra get `cancelled` error results, and workers leave the batch alone', async () => {
    const cancel = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .send({ spectra: Array.from({ length: 12 }, (_, i) => simulatedSpectrum(`C${i}`, i)) });
    expect(cancel.body.state).toBe('queued');
    expect(cancel.body.counts.pending).toBe(12);
    const r = await request(svc.app).post(`/v1/batches/${cancel.body.id}/cancel`).set(auth('alpha'));
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ state: 'cancelled', processed: 12, counts: { pending: 0, error: 12 } });
    const res = await request(svc.app).get(`/v1/batches/${cancel.body.id}/results`).set(auth('alpha'));
    expect(res.body.spectra.map((s: { reason: { code: string } }) => s.reason.code)).toEqual(
      Array(12).fill('cancelled'),
    );

    const k = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .send({ spectra: [simulatedSpectrum('R1', 1), simulatedSpectrum('R2', 2)] });
    kept = k.body.id;
    await svc.startWorkers();
    await waitFor(async () => (await state(kept)).state === 'completed');
    expect((await state(cancel.body.id)).state).toBe('cancelled');
    const again = await request(svc.app).get(`/v1/batches/${cancel.body.id}/results`).set(auth('alpha'));
    expect(again.text).toBe(res.text);
  });

  it('admin uploads a rule set (YAML), activates it; a broken one is a 422 with positions', async () => {
    const yaml = readFileSync('rules/default.yaml', 'utf8').replace(/^version: .*$/m, 'version: 1.0.1-test');
    const up = await request(svc.app)
      .post('/v1/rulesets')
      .set(auth('admin'))
      .set('Content-Type', 'application/yaml')
      .send(yaml);
    expect(up.status).toBe(201);
    expect(up.body).toMatchObject({ name: 'default', version: '1.0.1-test' });
    expect(up.body.sha256).toMatch(/^[0-9a-f]{64}$/);
    expect(up.body.sha256).not.toBe(svc.rulesetSha);
    const list = await request(svc.app).get('/v1/rulesets').set(auth('alpha'));
    expect(list.body.active).toBe(svc.rulesetSha);
    expect(list.body.rulesets.map((r: { sha256: string }) => r.sha256)).toContain(up.body.sha256);

    const broken = await request(svc.app)
      .post('/v1/rulesets')
      .set(auth('admin'))
      .set('Content-Type', 'application/yaml')
      .send(yaml.replace(/^version: .*$/m, 'version: not-semver'));
    expect(broken.status).toBe(422);
    expect(broken.body.code).toBe('invalid-ruleset');
    expect(broken.body.errors[0]).toMatchObject({ pointer: '/version' });
    expect(broken.body.errors[0].line).toBeGreaterThan(0);

    // Reprocess the kept batch with the new rule set (admin), then read the change report as its owner.
    const re = await request(svc.app)
      .post(`/v1/batches/${kept}/reprocess`)
      .set(auth('admin'))
      .send({ ruleset: up.body.sha256 });
    expect(re.status).toBe(202);
    expect(re.body).toMatchObject({ reprocessOf: kept, source: { kind: 'reprocess' }, total: 2 });
    expect(re.body.ruleset.sha256).toBe(up.body.sha256);
    await waitFor(async () => (await state(re.body.id)).state === 'completed');
    const ch = await request(svc.app).get(`/v1/batches/${re.body.id}/changes`).set(auth('alpha'));
    expect(ch.status).toBe(200);
    expect(ch.body).toMatchObject({ batch: re.body.id, reprocessOf: kept, total: 2 });
    expect(ch.body.from.sha256).toBe(svc.rulesetSha);
    expect(ch.body.changed).toBe(ch.body.changes.length);
    const results = await request(svc.app).get(`/v1/batches/${re.body.id}/results`).set(auth('alpha'));
    expect(results.body.spectra.map((s: { id: string }) => s.id)).toEqual(['R1', 'R2']);

    const act = await request(svc.app).post(`/v1/rulesets/${up.body.sha256}/activate`).set(auth('admin'));
    expect(act.body.active).toBe(up.body.sha256);
    const next = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .send({ spectra: [simulatedSpectrum('N1')] });
    expect(next.body.ruleset.sha256).toBe(up.body.sha256);
  });
});
