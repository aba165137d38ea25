import type { Request, RequestHandler } from 'express';
import { type IncrementResponse, type Options, rateLimit, type Store as RateStore } from 'express-rate-limit';
import type { Redis } from 'ioredis';
import type { RedisKeys } from '../store/keys.js';
import { sendProblem } from './problem.js';

// Fixed window: INCR, set the expiry with the first hit, return hits and ms left.
const INCREMENT = `
local hits = redis.call('INCR', KEYS[1])
if hits == 1 then redis.call('PEXPIRE', KEYS[1], ARGV[1]) end
local ttl = redis.call('PTTL', KEYS[1])
if ttl < 0 then redis.call('PEXPIRE', KEYS[1], ARGV[1]); ttl = tonumber(ARGV[1]) end
return {hits, ttl}
`;

/** An express-rate-limit store on Redis, so every API process shares one count per client. */
export class RedisRateStore implements RateStore {
  private windowMs = 60_000;
  readonly localKeys = false;
  constructor(
    private readonly redis: Redis,
    private readonly keys: RedisKeys,
  ) {}
  init(options: Options): void {
    this.windowMs = options.windowMs;
  }
  async increment(key: string): Promise<IncrementResponse> {
    const [hits, ttl] = (await this.redis.eval(INCREMENT, 1, this.keys.rateLimit(key), this.windowMs)) as [
      number,
      number,
    ];
    return { totalHits: hits, resetTime: new Date(Date.now() + ttl) };
  }
  async decrement(key: string): Promise<void> {
    await this.redis.decr(this.keys.rateLimit(key));
  }
  async resetKey(key: string): Promise<void> {
    await this.redis.del(this.keys.rateLimit(key));
  }
}

/** Per-client rate limit (after authentication), answered with a 429 problem and `RateLimit` headers. */
export function clientRateLimit(redis: Redis, keys: RedisKeys, perMinute: number): RequestHandler {
  return rateLimit({
    windowMs: 60_000,
    limit: perMinute,
    standardHeaders: 'draft-8',
    legacyHeaders: false,
    store: new RedisRateStore(redis, keys),
    keyGenerator: (req: Request) => req.principal?.clientId ?? 'anonymous',
    // Redis down: let the request through; the route itself answers 503 if it needs Redis.
    passOnStoreError: true,
    handler: (req, res) =>
      sendProblem(req, res, 'rate-limited', `at most ${perMinute} requests per minute per client`),
  });
}
