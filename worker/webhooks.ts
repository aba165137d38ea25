import type { Queue } from 'bullmq';
import type { Store } from '../store/store.js';
import type { WebhookJobData } from './queues.js';
import { signWebhook } from './webhook-signing.js';

/** Event types Peel sends. */
export type WebhookEvent = 'batch.completed' | 'batch.failed' | 'batch.cancelled';

/**
 * Queues the webhook event of a finished batch, if its client has an endpoint. The job id is derived from
 * the batch and event, so a repeated call (a retried job) does not queue a second delivery.
 */
export async function enqueueBatchEvent(
  store: Store,
  queue: Queue<WebhookJobData>,
  batchId: string,
  now: () => Date = () => new Date(),
): Promise<boolean> {
  const batch = await store.getBatch(batchId);
  if (!batch) return false;
  const endpoint = await store.getWebhook(batch.clientId);
  if (!endpoint) return false;
  const event: WebhookEvent =
    batch.state === 'completed'
      ? 'batch.completed'
      : batch.state === 'cancelled'
        ? 'batch.cancelled'
        : 'batch.failed';
  const webhookId = `msg_${batchId}_${event.split('.')[1]}`;
  const body = JSON.stringify({
    type: event,
    timestamp: now().toISOString(),
    data: {
      batchId,
      state: batch.state,
      total: batch.total,
      counts: batch.counts,
      finishedAt: batch.finishedAt,
      links: { self: `/v1/batches/${batchId}`, results: `/v1/batches/${batchId}/results` },
    },
  });
  await queue.add(event, { clientId: batch.clientId, batchId, webhookId, event, body }, { jobId: webhookId });
  return true;
}

/** Dependencies of {@link createWebhookProcessor}. */
export interface WebhookProcessorDeps {
  store: Store;
  /** Timeout of one request, ms. @defaultValue 10000 */
  timeoutMs?: number;
  now?: () => Date;
  /** Called after every attempt (metrics). */
  onAttempt?: (ok: boolean, seconds: number) => void;
}

/** The part of a BullMQ job the webhook processor uses. */
export interface WebhookJob {
  data: WebhookJobData;
  attemptsMade: number;
}

/**
 * Builds the webhook delivery processor: signs the stored body (Standard Webhooks 1.0) with the client's
 * current secret and POSTs it; any answer but 2xx (redirects included) throws, so BullMQ retries with
 * backoff and jitter. Every attempt is logged on the batch.
 */
export function createWebhookProcessor(
  deps: WebhookProcessorDeps,
): (job: WebhookJob) => Promise<{ status: number } | null> {
  const now = deps.now ?? (() => new Date());
  return async function deliver(job: WebhookJob) {
    const { clientId, batchId, webhookId, event, body } = job.data;
    const endpoint = await deps.store.getWebhook(clientId);
    if (!endpoint) return null; // The client removed its endpoint: nothing to deliver to.
    const at = now();
    const ts = Math.floor(at.getTime() / 1000);
    const t0 = performance.now();
    let status: number | null = null;
    let error: string | undefined;
    try {
      const res = await fetch(endpoint.url, {
        method: 'POST',
        redirect: 'manual',
        signal: AbortSignal.timeout(deps.timeoutMs ?? 10_000),
        headers: {
          'content-type': 'application/json',
          'user-agent': 'peel-webhooks/1',
          'webhook-id': webhookId,
          'webhook-timestamp': String(ts),
          'webhook-signature': signWebhook(endpoint.secret, webhookId, ts, body),
        },
        body,
      });
      status = res.status;
      await res.body?.cancel();
      if (status < 200 || status >= 300) error = `receiver answered ${status}`;
    } catch (err) {
      error = err instanceof Error && err.name === 'TimeoutError' ? 'timed out' : 'connection failed';
    }
    const seconds = (performance.now() - t0) / 1000;
    const ok = error === undefined;
    deps.onAttempt?.(ok, seconds);
    await deps.store.logDelivery(batchId, {
      webhookId,
      event,
      attempt: job.attemptsMade + 1,
      at: at.toISOString(),
      url: endpoint.url,
      ok,
      status,
      durationMs: Math.round(seconds * 1000),
      ...(error ? { error } : {}),
    });
    if (!ok) throw Object.assign(new Error(`webhook delivery failed: ${error}`), { code: 'webhook-failed' });
    return { status: status! };
  };
}
