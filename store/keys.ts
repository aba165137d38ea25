/**
 * Every Redis key Peel writes, under one hash-tagged prefix (`{peel}` by default) so a whole deployment maps
 * to one Redis Cluster slot: multi-key scripts and BullMQ's own scripts stay legal on a cluster.
 */
export function redisKeys(prefix: string) {
  return {
    prefix,
    /** BullMQ's prefix: its keys become `<prefix>:<queue>:…`. */
    queuePrefix: prefix,
    batch: (id: string) => `${prefix}:batch:${id}`,
    /** LIST of `[spectrumHash|null, spectrumId]`, one per spectrum in submission order. */
    items: (id: string) => `${prefix}:batch:${id}:items`,
    /** HASH index → result JSON; written once per index (HSETNX), so results read back identically. */
    results: (id: string) => `${prefix}:batch:${id}:results`,
    /** LIST of read issues (warnings and errors) found while ingesting. */
    issues: (id: string) => `${prefix}:batch:${id}:issues`,
    /** LIST of webhook delivery attempts. */
    deliveries: (id: string) => `${prefix}:batch:${id}:deliveries`,
    /** ZSET of a client's batch ids by creation time. */
    clientBatches: (clientId: string) => `${prefix}:client:${clientId}:batches`,
    /** HASH of a client's webhook endpoint (url, secret). */
    webhook: (clientId: string) => `${prefix}:client:${clientId}:webhook`,
    /** A spectrum by content hash: stored once however often it is submitted. */
    spectrum: (hash: string) => `${prefix}:spectrum:${hash}`,
    /** A result by spectrum hash + scoring key (rule set, options, engine version). */
    cachedResult: (scoringKey: string, spectrumHash: string) =>
      `${prefix}:result:${scoringKey}:${spectrumHash}`,
    ruleset: (sha256: string) => `${prefix}:ruleset:${sha256}`,
    /** HASH sha256 → JSON summary of every stored rule set. */
    rulesets: () => `${prefix}:rulesets`,
    activeRuleset: () => `${prefix}:ruleset-active`,
    idempotency: (clientId: string, key: string) => `${prefix}:idem:${clientId}:${key}`,
    rateLimit: (clientId: string) => `${prefix}:rate:${clientId}`,
  };
}

/** The key builder for one prefix. */
export type RedisKeys = ReturnType<typeof redisKeys>;
