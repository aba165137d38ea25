/**
 * A bounded memo with least-recently-used eviction. The engine's memos (topologies, sub-multisets) depend on
 * the rule set only, so they carry over from spectrum to spectrum; the bound keeps a long run's memory flat,
 * and evicting the least recently used entry (rather than clearing the lot) keeps the common compositions.
 */
export class LruCache<K, V> {
  readonly #map = new Map<K, V>();

  constructor(readonly capacity: number) {}

  get size(): number {
    return this.#map.size;
  }

  get(key: K): V | undefined {
    const v = this.#map.get(key);
    if (v !== undefined) {
      // Most recently used last: Map keeps insertion order.
      this.#map.delete(key);
      this.#map.set(key, v);
    }
    return v;
  }

  set(key: K, value: V): void {
    this.#map.delete(key);
    this.#map.set(key, value);
    if (this.#map.size > this.capacity) this.#map.delete(this.#map.keys().next().value as K);
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
