import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { SpectrumResultSchema } from '../../../engine/report/result.js';
import { BatchStatusSchema } from '../../../store/schemas.js';
import { startTestRedis, type TestRedis, testPrefix } from '../../helpers/redis.js';
import { auth, simulatedSpectrum, startTestService, type TestService, waitFor } from '../../helpers/service.js';

let redis: TestRedis;
let svc: TestService;

beforeAll(async () => {
  redis = await startTestRedis();
  svc = await startTestService({ url: redis.url, prefix: testPrefix('submit') });
});
afterAll(async () => {
  await svc?.close();
  await redis?.stop();
});

async function finished(id: string, who: 'alpha' | 'beta' = 'alpha') {
  return waitFor(async () => {
    const r = await request(svc.app).get(`/v1/batches/${id}`).set(auth(who));
    return ['completed', 'failed', 'cancelled'].includes(r.body.state) ? r.body : null;
  });
}

describe('JSON batches', () => {
  it('submit → poll → results, every spectrum exactly once', async () => {
    const spectra = Array.from({ length: 23 }, (_, i) => simulatedSpectrum(`S${i}`, i));
    const sub = await request(svc.app).post('/v1/batches').set(auth('alpha')).send({ spectra });
    expect(sub.status).toBe(202);
    expect(sub.headers.location).toBe(`/v1/batches/${sub.body.id}`);
    expect(BatchStatusSchema.safeParse(sub.body).success).toBe(true);
    const done = await finished(sub.body.id);
    expect(done.state).toBe('completed');
    expect(done.total).toBe(23);
    expect(done.processed).toBe(23);
    const res = await request(svc.app).get(`/v1/batches/${sub.body.id}/results`).set(auth('alpha'));
    expect(res.status).toBe(200);
    expect(res.body.spectra.map((s: { id: string }) => s.id)).toEqual(spectra.map((s) => s.id));
    for (const s of res.body.spectra) expect(SpectrumResultSchema.safeParse(s).success).toBe(true);
  });
});
