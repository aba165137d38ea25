import { pino } from 'pino';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../../api/app.js';
import { hashApiKey } from '../../../api/auth.js';
import { type ConfigError, parseConfig } from '../../../api/config.js';
import { checkEvictionPolicy, connectRedis, createRedis } from '../../../store/redis.js';
import { createStore } from '../../../store/store.js';
import { createScoreQueue, createWebhookQueue } from '../../../worker/queues.js';
import { queueSettings } from '../../../worker/runtime.js';
import { startTestRedis, type TestRedis, testPrefix } from '../../helpers/redis.js';

let redis: TestRedis;
beforeAll(async () => {
  redis = await startTestRedis();
});
afterAll(async () => {
  await redis?.stop();
});

describe('configuration', () => {
  it('defaults are complete; every bad variable is named with what is wrong', () => {
    const c = parseConfig({});
    expect(c).toMatchObject({
      PORT: 8080,
      KEY_PREFIX: '{peel}',
      CHUNK_SIZE: 200,
      EVICTION_POLICY_CHECK: 'refuse',
    });
    expect(c.BODY_LIMIT_JSON).toBe(64 * 1024 ** 2);
    const k = parseConfig({
      API_KEYS: `lab-1:client:${'a'.repeat(64)}, ops:admin:${'b'.repeat(64)}`,
      BODY_LIMIT_UPLOAD: '2.5mb',
    });
    expect(k.API_KEYS).toEqual([
      { clientId: 'lab-1', role: 'client', hash: 'a'.repeat(64) },
      { clientId: 'ops', role: 'admin', hash: 'b'.repeat(64) },
    ]);
    expect(k.BODY_LIMIT_UPLOAD).toBe(Math.floor(2.5 * 1024 ** 2));
    try {
      parseConfig({
        PORT: 'eighty',
        KEY_PREFIX: 'peel:',
        API_KEYS: 'lab:root:xyz',
        REDIS_URL: 'http://x',
        BODY_LIMIT_JSON: 'lots',
      });
      expect.unreachable();
    } catch (err) {
      expect((err as ConfigError).code).toBe('invalid-config');
      const vars = (err as ConfigError).issues.map((i) => i.split(/[.:]/)[0]);
      expect(vars.sort()).toEqual(['API_KEYS', 'BODY_LIMIT_JSON', 'KEY_PREFIX', 'PORT', 'REDIS_URL']);
    }
  });
});

describe('Redis checks', () => {
  it('refuses (or warns about) an eviction policy other than noeviction', async () => {
    const r = createRedis(redis.url, 'producer');
    await connectRedis(r);
    try {
      expect(await checkEvictionPolicy(r, 'refuse', () => {})).toBe('noeviction');
      // Only on a Redis of our own: changing a shared server's policy would disturb others.
      if (redis.kind === 'binary' || redis.kind === 'container') {
        await r.config('SET', 'maxmemory-policy', 'allkeys-lru');
        try {
          await expect(checkEvictionPolicy(r, 'refuse', () => {})).rejects.toMatchObject({
            code: 'eviction-policy',
          });
          const warned: string[] = [];
          expect(await checkEvictionPolicy(r, 'warn', (m) => warned.push(m))).toBe('allkeys-lru');
          expect(warned[0]).toMatch(/noeviction/);
        } finally {
          await r.config('SET', 'maxmemory-policy', 'noeviction');
        }
      }
    } finally {
      r.disconnect();
    }
  });

  it('/readyz is 503 (problem details) when Redis is gone, /livez still 200; producers fail fast', async () => {
    const prefix = testPrefix('ready');
    const c = parseConfig({ REDIS_URL: redis.url, KEY_PREFIX: prefix });
    const r = createRedis(redis.url, 'producer');
    await connectRedis(r);
    const store = createStore({ redis: r, prefix });
    const qs = queueSettings(c);
    const scoreQueue = createScoreQueue(r, qs);
    const webhookQueue = createWebhookQueue(r, qs);
    const app = createApp({
      store,
      scoreQueue,
      webhookQueue,
      logger: pino({ level: 'silent' }),
      apiKeys: [],
    });
    expect((await request(app).get('/readyz')).status).toBe(200);
    r.disconnect();
    const t0 = Date.now();
    const ready = await request(app).get('/readyz');
    expect(ready.status).toBe(503);
    expect(ready.headers['content-type']).toMatch(/problem\+json/);
    expect(ready.body.code).toBe('store-unavailable');
    expect(Date.now() - t0).toBeLessThan(2000);
    expect((await request(app).get('/livez')).status).toBe(200);
    await Promise.all([scoreQueue.close(), webhookQueue.close()]).catch(() => {});
  });

  it('rate limits per client: the client over its limit gets 429 problems, another client does not', async () => {
    const prefix = testPrefix('rate');
    const c = parseConfig({ REDIS_URL: redis.url, KEY_PREFIX: prefix });
    const r = createRedis(redis.url, 'producer');
    await connectRedis(r);
    const store = createStore({ redis: r, prefix });
    const qs = queueSettings(c);
    const scoreQueue = createScoreQueue(r, qs);
    const webhookQueue = createWebhookQueue(r, qs);
    const keys = { a: 'pk_rate_test_a_000000', b: 'pk_rate_test_b_000000' };
    const app = createApp({
      store,
      scoreQueue,
      webhookQueue,
      logger: pino({ level: 'silent' }),
      apiKeys: [
        { clientId: 'a', role: 'client', hash: hashApiKey(keys.a) },
        { clientId: 'b', role: 'client', hash: hashApiKey(keys.b) },
      ],
      limits: { ratePerMinute: 3 },
    });
    try {
      const get = (k: string) => request(app).get('/v1/batches').set('Authorization', `Bearer ${k}`);
      for (let i = 0; i < 3; i++) expect((await get(keys.a)).status).toBe(200);
      const over = await get(keys.a);
      expect(over.status).toBe(429);
      expect(over.body.code).toBe('rate-limited');
      expect(over.headers['content-type']).toMatch(/problem\+json/);
      expect(over.headers.ratelimit).toBeDefined();
      expect((await get(keys.b)).status).toBe(200);
    } finally {
      await Promise.all([scoreQueue.close(), webhookQueue.close()]);
      await store.deleteEverything();
      r.disconnect();
    }
  });
});
