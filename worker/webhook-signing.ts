import { createHmac, randomBytes, timingSafeEqual } from 'node:crypto';

/** A new webhook signing secret in the Standard Webhooks form: `whsec_` + base64 of 32 random bytes. */
export function newWebhookSecret(): string {
  return `whsec_${randomBytes(32).toString('base64')}`;
}

function secretBytes(secret: string): Buffer {
  return Buffer.from(secret.startsWith('whsec_') ? secret.slice(6) : secret, 'base64');
}

/**
 * The `webhook-signature` value of Standard Webhooks 1.0: `v1,` + base64 HMAC-SHA256 of `id.timestamp.body`
 * under the base64-decoded secret.
 */
export function signWebhook(secret: string, id: string, timestampSeconds: number, body: string): string {
  const mac = createHmac('sha256', secretBytes(secret))
    .update(`${id}.${timestampSeconds}.${body}`)
    .digest('base64');
  return `v1,${mac}`;
}

/** Why a webhook signature was not accepted. */
export type VerifyFailure = 'missing-headers' | 'stale-timestamp' | 'bad-signature';

/**
 * Verifies a received webhook (what a receiver does): any `v1` signature in the space-separated header must
 * match, and the timestamp must be within `toleranceSeconds` of `nowSeconds`.
 */
export function verifyWebhook(
  secret: string,
  headers: { id?: string; timestamp?: string; signature?: string },
  body: string,
  nowSeconds: number,
  toleranceSeconds = 300,
): { ok: true } | { ok: false; reason: VerifyFailure } {
  const { id, timestamp, signature } = headers;
  if (!id || !timestamp || !signature) return { ok: false, reason: 'missing-headers' };
  const ts = Number(timestamp);
  if (!Number.isInteger(ts) || Math.abs(nowSeconds - ts) > toleranceSeconds)
    return { ok: false, reason: 'stale-timestamp' };
  const expected = Buffer.from(signWebhook(secret, id, ts, body).slice(3), 'base64');
  for (const part of signature.split(' ')) {
    const [version, sig] = part.split(',', 2);
    if (version !== 'v1' || !sig) continue;
    const got = Buffer.from(sig, 'base64');
    if (got.length === expected.length && timingSafeEqual(got, expected)) return { ok: true };
  }
  return { ok: false, reason: 'bad-signature' };
}
