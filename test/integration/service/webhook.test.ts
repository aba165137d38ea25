import { createHmac } from 'node:crypto';
import { createServer, type IncomingHttpHeaders, type Server } from 'node:http';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { verifyWebhook } from '../../../worker/webhook-signing.js';
import { startTestRedis, type TestRedis, testPrefix } from '../../helpers/redis.js';
import {
  auth,
  simulatedSpectrum,
  startTestService,
  type TestService,
  waitFor,
} from '../../helpers/service.js';

let redis: TestRedis;
let svc: TestService;
let receiver: Server;
let url: string;
const received: Array<{ headers: IncomingHttpHeaders; body: string; answered: number }> = [];
let failFirst = 1;

beforeAll(async () => {
  redis = await startTestRedis();
  svc = await startTestService({ url: redis.url, prefix: testPrefix('webhook') });
  // A LIMS stand-in on 127.0.0.1 that fails the first delivery (503) and accepts the next.
  receiver = createServer((req, res) => {
    let body = '';
    req.on('data', (c) => (body += c));
    req.on('end', () => {
      const answered = failFirst-- > 0 ? 503 : 204;
      received.push({ headers: req.headers, body, answered });
      res.writeHead(answered).end();
    });
  });
  await new Promise<void>((r) => receiver.listen(0, '127.0.0.1', r));
  url = `http://127.0.0.1:${(receiver.address() as { port: number }).port}/peel-events`;
});
afterAll(async () => {
  await new Promise((r) => receiver?.close(r));
  await svc?.close();
  await redis?.stop();
});

describe('webhooks (Standard Webhooks 1.0)', () => {
  it('registers an endpoint and returns a whsec_ secret; https is required unless allowed', async () => {
    const r = await request(svc.app).put('/v1/webhook').set(auth('alpha')).send({ url });
    expect(r.status).toBe(200);
    expect(r.body.url).toBe(url);
    expect(r.body.secret).toMatch(/^whsec_[A-Za-z0-9+/]+=*$/);
    const again = await request(svc.app).put('/v1/webhook').set(auth('alpha')).send({ url });
    expect(again.body.secret).toBe(r.body.secret);
    const bad = await request(svc.app).put('/v1/webhook').set(auth('alpha')).send({ url: 'ftp://x' });
    expect(bad.status).toBe(422);
    expect(bad.body.errors[0].pointer).toBe('/url');
  });

  it('POSTs a signed batch.completed event, retried after the receiver fails, with a delivery log', async () => {
    const { body: ep } = await request(svc.app).get('/v1/webhook').set(auth('alpha'));
    const sub = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .send({ spectra: [simulatedSpectrum('w-1'), simulatedSpectrum('w-2', 2)] });
    expect(sub.status).toBe(202);
    await waitFor(async () => received.some((r) => r.answered === 204), 30_000);
    expect(received.length).toBe(2);
    const [first, second] = received as [(typeof received)[0], (typeof received)[0]];
    // The same message id and body on the retry; a fresh timestamp and signature.
    expect(second.headers['webhook-id']).toBe(first.headers['webhook-id']);
    expect(second.body).toBe(first.body);
    const event = JSON.parse(second.body);
    expect(event).toMatchObject({
      type: 'batch.completed',
      data: { batchId: sub.body.id, state: 'completed', total: 2 },
    });

    // Verify as a receiver would, independently of Peel's code: HMAC-SHA256 over "id.timestamp.body"
    // with the base64-decoded secret (Standard Webhooks 1.0, "Verifying webhooks").
    const id = String(second.headers['webhook-id']);
    const ts = String(second.headers['webhook-timestamp']);
    const key = Buffer.from(ep.secret.slice('whsec_'.length), 'base64');
    const expected = createHmac('sha256', key).update(`${id}.${ts}.${second.body}`).digest('base64');
    expect(second.headers['webhook-signature']).toBe(`v1,${expected}`);
    expect(Math.abs(Date.now() / 1000 - Number(ts))).toBeLessThan(60);
    const headers = { id, timestamp: ts, signature: String(second.headers['webhook-signature']) };
    expect(verifyWebhook(ep.secret, headers, second.body, Date.now() / 1000)).toEqual({ ok: true });
    expect(verifyWebhook(ep.secret, headers, `${second.body} `, Date.now() / 1000)).toEqual({
      ok: false,
      reason: 'bad-signature',
    });
    expect(verifyWebhook(ep.secret, headers, second.body, Date.now() / 1000 + 3600)).toEqual({
      ok: false,
      reason: 'stale-timestamp',
    });

    const log = await waitFor(async () => {
      const r = await request(svc.app)
        .get(`/v1/batches/${sub.body.id}/webhook-deliveries`)
        .set(auth('alpha'));
      return r.body.deliveries.length === 2 ? r.body.deliveries : null;
    });
    expect(
      log.map((d: { ok: boolean; status: number; attempt: number }) => [d.attempt, d.ok, d.status]),
    ).toEqual([
      [1, false, 503],
      [2, true, 204],
    ]);
    // Another client cannot read the log.
    expect(
      (await request(svc.app).get(`/v1/batches/${sub.body.id}/webhook-deliveries`).set(auth('beta'))).status,
    ).toBe(404);
    const m = await request(svc.app).get('/metrics');
    expect(m.text).toMatch(/peel_webhook_deliveries_total\{outcome="failed"\} 1/);
    expect(m.text).toMatch(/peel_webhook_deliveries_total\{outcome="delivered"\} 1/);
  });

  it('a client without an endpoint gets no delivery; deleting the endpoint works', async () => {
    const before = received.length;
    const sub = await request(svc.app)
      .post('/v1/batches')
      .set(auth('beta'))
      .send({ spectra: [simulatedSpectrum('w-3', 3)] });
    await waitFor(async () => {
      const r = await request(svc.app).get(`/v1/batches/${sub.body.id}`).set(auth('beta'));
      return r.body.state === 'completed';
    });
    await new Promise((r) => setTimeout(r, 300));
    expect(received.length).toBe(before);
    expect((await request(svc.app).delete('/v1/webhook').set(auth('alpha'))).status).toBe(204);
    expect((await request(svc.app).get('/v1/webhook').set(auth('alpha'))).status).toBe(404);
  });
});
