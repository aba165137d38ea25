import { Redis, type RedisOptions } from 'ioredis';

/** What a connection is for: the roles differ in how they behave while Redis is away. */
export type ConnectionRole = 'producer' | 'worker';

/**
 * Opens a Redis connection. `producer` connections (the HTTP path) fail fast: no offline queue and one retry,
 * so a request gets a 503 instead of hanging. `worker` connections wait for Redis to come back
 * (`maxRetriesPerRequest: null`, as BullMQ requires for blocking connections).
 */
export function createRedis(url: string, role: ConnectionRole, extra: RedisOptions = {}): Redis {
  const base: RedisOptions =
    role === 'producer'
      ? { maxRetriesPerRequest: 1, enableOfflineQueue: false, connectTimeout: 5000, lazyConnect: true }
      : { maxRetriesPerRequest: null, enableOfflineQueue: true, lazyConnect: true };
  return new Redis(url, { ...base, ...extra });
}

/** Connects a lazily created connection and waits until it answers. */
export async function connectRedis(redis: Redis): Promise<void> {
  if (redis.status === 'wait') await redis.connect();
  else if (redis.status !== 'ready') {
    await new Promise<void>((resolve, reject) => {
      redis.once('ready', () => resolve());
      redis.once('error', reject);
    });
  }
  await redis.ping();
}

/** Redis's eviction policy is not `noeviction`: queue and result keys could silently vanish. */
export class EvictionPolicyError extends Error {
  override readonly name = 'EvictionPolicyError' as const;
  readonly code = 'eviction-policy' as const;
  constructor(readonly policy: string) {
    super(
      `Redis maxmemory-policy is "${policy}", not "noeviction": under memory pressure Redis would delete queued ` +
        'jobs and stored results. Set `maxmemory-policy noeviction` (or EVICTION_POLICY_CHECK=warn to start anyway).',
    );
  }
}

/**
 * Reads Redis's `maxmemory-policy`. Managed Redis services that disable CONFIG are answered from INFO;
 * `unknown` when neither tells.
 */
export async function evictionPolicy(redis: Redis): Promise<string> {
  try {
    const r = (await redis.config('GET', 'maxmemory-policy')) as string[];
    if (r.length >= 2 && r[1]) return r[1];
  } catch {
    // CONFIG may be renamed or disabled; fall back to INFO.
  }
  const info = await redis.info('memory');
  return /maxmemory_policy:(\S+)/.exec(info)?.[1] ?? 'unknown';
}

/** Checks the eviction policy at start-up: throws {@link EvictionPolicyError} (`refuse`) or calls `warn`. */
export async function checkEvictionPolicy(
  redis: Redis,
  mode: 'refuse' | 'warn',
  warn: (message: string) => void,
): Promise<string> {
  const policy = await evictionPolicy(redis);
  if (policy !== 'noeviction') {
    const err = new EvictionPolicyError(policy);
    if (mode === 'refuse') throw err;
    warn(`WARNING: ${err.message}`);
  }
  return policy;
}

/**
 * Visits every key that starts with `prefix` (SCAN, so Redis is never blocked); glob characters in the
 * prefix are escaped. Returns the sum of what `visit` returns.
 */
export async function scanPrefix(
  redis: Redis,
  prefix: string,
  visit: (keys: string[]) => Promise<number> | number,
): Promise<number> {
  const pattern = `${prefix.replace(/([{}[\]*?\\])/g, '\\$1')}*`;
  let cursor = '0';
  let n = 0;
  do {
    const [next, keys] = await redis.scan(cursor, 'MATCH', pattern, 'COUNT', 1000);
    cursor = next;
    if (keys.length > 0) n += await visit(keys);
  } while (cursor !== '0');
  return n;
}

/** Deletes every key that starts with `prefix`; returns how many were deleted. */
export function deletePrefix(redis: Redis, prefix: string): Promise<number> {
  return scanPrefix(redis, prefix, (keys) => redis.unlink(...keys));
}
