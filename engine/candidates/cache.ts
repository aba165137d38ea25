/**
 * A bounded memo. The engine's memos (topologies, sub-multisets) depend on the rule set only, so they carry
 * over from spectrum to spectrum; the bound keeps a long run's memory flat. Eviction is the clock
 * (second-chance) approximation of least-recently-used: a hit only marks its entry, and when the memo is full
 * the oldest entries are evicted unless marked, in which case they go round once more. Hits are thus as cheap
 * as a plain map lookup, and the common compositions stay.
 */
export class LruCache<K, V> {
  readonly #map = new Map<K, { value: V; used: boolean }>();

  constructor(readonly capacity: number) {}

  get size(): number {
    return this.#map.size;
  }

  get(key: K): V | undefined {
    const e = this.#map.get(key);
    if (e === undefined) return undefined;
    e.used = true;
    return e.value;
  }

  set(key: K, value: V): void {
    this.#map.delete(key);
    this.#map.set(key, { value, used: false });
    while (this.#map.size > this.capacity) {
      const [oldest, e] = this.#map.entries().next().value as [K, { value: V; used: boolean }];
      this.#map.delete(oldest);
      if (e.used) {
        // Second chance: back to the young end, unmarked.
        e.used = false;
        this.#map.set(oldest, e);
      }
    }
  }

  /** The cached value, or `make()` stored and returned. */
  getOrSet(key: K, make: () => V): V {
    const hit = this.get(key);
    if (hit !== undefined) return hit;
    const v = make();
    this.set(key, v);
    return v;
  }
}

/**
 * A key for a unit count vector: a number when it fits exactly (counts < 8, ≤ 17 units: Σ count·8^u < 2^53),
 * else its text.
 */
export function countsKey(counts: ArrayLike<number>): number | string {
  if (counts.length <= 17) {
    let k = 0;
    let ok = true;
    for (let u = counts.length - 1; u >= 0; u--) {
      const n = counts[u]!;
      if (n >= 8) ok = false;
      k = k * 8 + n;
    }
    if (ok) return k;
  }
  return Array.prototype.join.call(counts, ',');
}
