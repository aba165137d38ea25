import { z } from 'zod';

const HASH_TAGGED = /^\{[^{}:]+\}(?::[A-Za-z0-9._-]+)*$/;

const bool = (fallback: boolean) =>
  z
    .enum(['true', 'false', '1', '0', 'yes', 'no'])
    .default(fallback ? 'true' : 'false')
    .transform((v) => v === 'true' || v === '1' || v === 'yes');

const int = (fallback: number, min: number, max: number) =>
  z.coerce.number().int().min(min).max(max).default(fallback);

/** Size with an optional unit: `512kb`, `64mb`, `1gb`, or plain bytes. */
const byteSize = (fallback: string) =>
  z
    .string()
    .default(fallback)
    .transform((s, ctx) => {
      const m = /^\s*(\d+(?:\.\d+)?)\s*(b|kb|mb|gb)?\s*$/i.exec(s);
      if (!m) {
        ctx.addIssue({ code: 'custom', message: 'a size such as 512kb, 64mb or 1gb' });
        return z.NEVER;
      }
      const unit = { b: 1, kb: 1024, mb: 1024 ** 2, gb: 1024 ** 3 }[(m[2] ?? 'b').toLowerCase() as 'b'];
      return Math.floor(Number(m[1]) * unit);
    });

/** One API key entry: `client:role:sha256hex` (the key itself is never configured, only its hash). */
const ApiKeyEntry = z
  .string()
  .regex(
    /^[A-Za-z0-9_.-]{1,64}:(client|admin):[0-9a-f]{64}$/,
    'client:role:sha256hex with role client or admin',
  )
  .transform((s) => {
    const [clientId, role, hash] = s.split(':') as [string, 'client' | 'admin', string];
    return { clientId, role, hash };
  });

/**
 * The service's configuration, from environment variables. Every variable, its default and its meaning are
 * listed here and in docs/api.md; `parseConfig` is the one place they are read and checked.
 */
export const ConfigSchema = z.object({
  /** HTTP port of the API. @defaultValue 8080 */
  PORT: int(8080, 0, 65535),
  /** Address the API binds. @defaultValue 0.0.0.0 */
  HOST: z.string().min(1).default('0.0.0.0'),
  /** Redis URL (`redis://` or `rediss://`). @defaultValue redis://127.0.0.1:6379 */
  REDIS_URL: z.url({ protocol: /^rediss?$/ }).default('redis://127.0.0.1:6379'),
  /** Prefix of every Redis key, with a hash tag so all keys share one cluster slot. @defaultValue {peel} */
  KEY_PREFIX: z
    .string()
    .regex(HASH_TAGGED, 'a hash-tagged prefix such as {peel} or {peel}:prod')
    .default('{peel}'),
  /** What to do when Redis's maxmemory-policy is not noeviction: refuse to start, or warn. @defaultValue refuse */
  EVICTION_POLICY_CHECK: z.enum(['refuse', 'warn']).default('refuse'),
  /** API keys, comma separated `client:role:sha256hex` (make one with `node dist/api/keygen.js`). */
  API_KEYS: z
    .string()
    .default('')
    .transform((s) =>
      s
        .split(',')
        .map((x) => x.trim())
        .filter(Boolean),
    )
    .pipe(z.array(ApiKeyEntry)),
  /** Rule-set file registered (and activated if none is active) at start-up. @defaultValue the bundled default */
  RULESET_PATH: z.string().min(1).optional(),
  /** Scoring jobs one worker process runs at once (each in its own worker thread). @defaultValue 2 */
  WORKER_CONCURRENCY: int(2, 1, 64),
  /** Spectra per scoring job. @defaultValue 200 */
  CHUNK_SIZE: int(200, 1, 10_000),
  /** Attempts of a scoring job before it counts as failed (transient faults). @defaultValue 5 */
  JOB_ATTEMPTS: int(5, 1, 50),
  /** First retry delay of a failed scoring job, ms (doubles each attempt). @defaultValue 1000 */
  JOB_BACKOFF_MS: int(1000, 10, 3_600_000),
  /** Lock duration of a running job, ms; a job whose worker died is picked up again after it. @defaultValue 30000 */
  LOCK_DURATION_MS: int(30_000, 500, 600_000),
  /** How often workers look for stalled jobs, ms. @defaultValue 30000 */
  STALLED_INTERVAL_MS: int(30_000, 200, 600_000),
  /** Finished jobs kept per queue (count). @defaultValue 1000 */
  KEEP_COMPLETED_JOBS: int(1000, 0, 1_000_000),
  /** Failed jobs kept per queue (count). @defaultValue 5000 */
  KEEP_FAILED_JOBS: int(5000, 0, 1_000_000),
  /** Days a cached result (by spectrum + rule set + options) is kept for reuse. @defaultValue 30 */
  RESULT_CACHE_DAYS: int(30, 0, 3650),
  /** Largest JSON batch body. @defaultValue 64mb */
  BODY_LIMIT_JSON: byteSize('64mb'),
  /** Largest uploaded file (MGF or mzML). @defaultValue 1gb */
  BODY_LIMIT_UPLOAD: byteSize('1gb'),
  /** Largest rule-set body. @defaultValue 2mb */
  BODY_LIMIT_RULESET: byteSize('2mb'),
  /** Most spectra in one batch. @defaultValue 200000 */
  MAX_BATCH_SPECTRA: int(200_000, 1, 10_000_000),
  /** Requests per client per minute. @defaultValue 600 */
  RATE_LIMIT_PER_MINUTE: int(600, 1, 1_000_000),
  /** How long an Idempotency-Key is remembered, seconds. @defaultValue 86400 */
  IDEMPOTENCY_TTL_SECONDS: int(86_400, 60, 30 * 86_400),
  /** Attempts of one webhook delivery. @defaultValue 8 */
  WEBHOOK_ATTEMPTS: int(8, 1, 30),
  /** First webhook retry delay, ms (exponential with jitter). @defaultValue 2000 */
  WEBHOOK_BACKOFF_MS: int(2000, 10, 3_600_000),
  /** Timeout of one webhook request, ms. @defaultValue 10000 */
  WEBHOOK_TIMEOUT_MS: int(10_000, 100, 120_000),
  /** Allow webhook URLs with http:// (not https://); for local networks and tests. @defaultValue false */
  WEBHOOK_ALLOW_HTTP: bool(false),
  /** Port of the stand-alone worker's /livez, /readyz and /metrics (0: none). @defaultValue 9464 */
  WORKER_METRICS_PORT: int(9464, 0, 65535),
  /** pino log level. @defaultValue info */
  LOG_LEVEL: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).default('info'),
  /** Trust X-Forwarded-* from this many proxies (express `trust proxy`). @defaultValue 0 */
  TRUST_PROXY: int(0, 0, 10),
});

/** The parsed configuration. */
export type ServiceConfig = z.infer<typeof ConfigSchema>;

/** A configuration that could not be parsed; `issues` name each variable and what is wrong with it. */
export class ConfigError extends Error {
  override readonly name = 'ConfigError' as const;
  readonly code = 'invalid-config' as const;
  constructor(readonly issues: string[]) {
    super(`invalid configuration:\n  ${issues.join('\n  ')}`);
  }
}

/** Parses environment variables into a {@link ServiceConfig}; throws {@link ConfigError} listing every problem. */
export function parseConfig(env: Record<string, string | undefined>): ServiceConfig {
  const picked: Record<string, string> = {};
  for (const key of Object.keys(ConfigSchema.shape)) {
    const v = env[key];
    if (v !== undefined && v !== '') picked[key] = v;
  }
  const r = ConfigSchema.safeParse(picked);
  if (!r.success) {
    throw new ConfigError(r.error.issues.map((i) => `${i.path.join('.') || '(env)'}: ${i.message}`));
  }
  return r.data;
}
