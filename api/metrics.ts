import { Counter, collectDefaultMetrics, Gauge, Histogram, Registry } from 'prom-client';

/** Something that can report its job counts per state (a BullMQ queue). */
export interface CountableQueue {
  name: string;
  getJobCounts(...states: string[]): Promise<Record<string, number>>;
}

/** Prometheus metrics of API and workers (one registry per process). */
export interface Metrics {
  registry: Registry;
  httpRequests: Counter<'method' | 'route' | 'status'>;
  httpDuration: Histogram<'method' | 'route'>;
  batchesSubmitted: Counter<'source'>;
  spectraSubmitted: Counter<'source'>;
  spectraProcessed: Counter<'status' | 'origin'>;
  chunkJobs: Counter<'outcome'>;
  chunkDuration: Histogram;
  webhookDeliveries: Counter<'outcome'>;
  webhookDuration: Histogram;
  /** Adds a queue whose depth by state is reported at each scrape. */
  watchQueue(queue: CountableQueue): void;
}

const QUEUE_STATES = [
  'waiting',
  'active',
  'delayed',
  'completed',
  'failed',
  'prioritized',
  'waiting-children',
];

/** Creates the metrics on a fresh registry (with Node's default process metrics under `peel_`). */
export function createMetrics(): Metrics {
  const registry = new Registry();
  collectDefaultMetrics({ register: registry, prefix: 'peel_' });
  const queues: CountableQueue[] = [];
  const r = [registry];
  new Gauge({
    name: 'peel_queue_jobs',
    help: 'Jobs in each queue by state',
    labelNames: ['queue', 'state'],
    registers: r,
    async collect() {
      this.reset();
      for (const q of queues) {
        try {
          const counts = await q.getJobCounts(...QUEUE_STATES);
          for (const [state, n] of Object.entries(counts)) this.set({ queue: q.name, state }, n);
        } catch {
          // Redis unreachable: /readyz says so; the scrape still answers.
        }
      }
    },
  });
  return {
    registry,
    httpRequests: new Counter({
      name: 'peel_http_requests_total',
      help: 'HTTP requests by method, route and status',
      labelNames: ['method', 'route', 'status'],
      registers: r,
    }),
    httpDuration: new Histogram({
      name: 'peel_http_request_duration_seconds',
      help: 'HTTP request duration',
      labelNames: ['method', 'route'],
      buckets: [0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30],
      registers: r,
    }),
    batchesSubmitted: new Counter({
      name: 'peel_batches_submitted_total',
      help: 'Batches accepted, by input kind',
      labelNames: ['source'],
      registers: r,
    }),
    spectraSubmitted: new Counter({
      name: 'peel_spectra_submitted_total',
      help: 'Spectra accepted (readable or not), by input kind',
      labelNames: ['source'],
      registers: r,
    }),
    spectraProcessed: new Counter({
      name: 'peel_spectra_processed_total',
      help: 'Spectra given a result by the workers, by result status and whether scored or served from cache',
      labelNames: ['status', 'origin'],
      registers: r,
    }),
    chunkJobs: new Counter({
      name: 'peel_chunk_jobs_total',
      help: 'Scoring jobs (chunks of spectra) by outcome',
      labelNames: ['outcome'],
      registers: r,
    }),
    chunkDuration: new Histogram({
      name: 'peel_chunk_job_duration_seconds',
      help: 'Duration of one scoring job',
      buckets: [0.01, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60, 120],
      registers: r,
    }),
    webhookDeliveries: new Counter({
      name: 'peel_webhook_deliveries_total',
      help: 'Webhook delivery attempts by outcome',
      labelNames: ['outcome'],
      registers: r,
    }),
    webhookDuration: new Histogram({
      name: 'peel_webhook_delivery_duration_seconds',
      help: 'Duration of one webhook delivery attempt',
      buckets: [0.01, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10],
      registers: r,
    }),
    watchQueue(queue) {
      if (!queues.includes(queue)) queues.push(queue);
    },
  };
}
