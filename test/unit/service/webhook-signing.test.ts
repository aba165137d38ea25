import { describe, expect, it } from 'vitest';
import { newWebhookSecret, signWebhook, verifyWebhook } from '../../../worker/webhook-signing.js';

// The test vector published with the Standard Webhooks 1.0 reference implementations
// (github.com/standard-webhooks/standard-webhooks, libraries' signature tests).
const VECTOR = {
  secret: 'whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw',
  id: 'msg_p5jXN8AQM9LWM0D4loKWxJek',
  timestamp: 1614265330,
  body: '{"test": 2432232314}',
  signature: 'v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE=',
};

describe('Standard Webhooks signatures', () => {
  it('reproduces the published test vector', () => {
    expect(signWebhook(VECTOR.secret, VECTOR.id, VECTOR.timestamp, VECTOR.body)).toBe(VECTOR.signature);
  });

  it('verifies it, among several signatures, and rejects tampering and stale timestamps', () => {
    const h = {
      id: VECTOR.id,
      timestamp: String(VECTOR.timestamp),
      signature: `v1,bm9wZQ== ${VECTOR.signature}`,
    };
    expect(verifyWebhook(VECTOR.secret, h, VECTOR.body, VECTOR.timestamp + 10)).toEqual({ ok: true });
    expect(verifyWebhook(VECTOR.secret, h, '{"test": 2432232315}', VECTOR.timestamp)).toEqual({
      ok: false,
      reason: 'bad-signature',
    });
    expect(verifyWebhook(VECTOR.secret, h, VECTOR.body, VECTOR.timestamp + 301)).toEqual({
      ok: false,
      reason: 'stale-timestamp',
    });
    expect(verifyWebhook(VECTOR.secret, { ...h, id: undefined }, VECTOR.body, VECTOR.timestamp)).toEqual({
      ok: false,
      reason: 'missing-headers',
    });
  });

  it('makes whsec_ secrets of 32 random bytes', () => {
    const s = newWebhookSecret();
    expect(s).toMatch(/^whsec_[A-Za-z0-9+/]{43}=$/);
    expect(Buffer.from(s.slice(6), 'base64')).toHaveLength(32);
    expect(newWebhookSecret()).not.toBe(s);
  });
});
