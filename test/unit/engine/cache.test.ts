// The engine's bounded memo (clock eviction) and its composition keys.
import { describe, expect, it } from 'vitest';
import { countsKey, LruCache } from '../../../engine/candidates/cache.js';

describe('LruCache', () => {
  it('never holds more than its capacity', () => {
    const c = new LruCache<number, number>(3);
    for (let i = 0; i < 10; i++) c.set(i, i * i);
    expect(c.size).toBe(3);
    expect(c.get(9)).toBe(81);
    expect(c.get(0)).toBeUndefined();
  });

  it('keeps an entry that was used since it was stored (second chance) and evicts an unused one', () => {
    const c = new LruCache<string, number>(2);
    c.set('a', 1);
    c.set('b', 2);
    expect(c.get('a')).toBe(1); // a is marked
    c.set('c', 3); // full: a is oldest but marked, so b goes
    expect(c.get('a')).toBe(1);
    expect(c.get('b')).toBeUndefined();
    expect(c.get('c')).toBe(3);
  });

  it('getOrSet builds a value once and serves it afterwards', () => {
    const c = new LruCache<number, string>(4);
    let built = 0;
    const make = () => {
      built++;
      return 'x';
    };
    expect(c.getOrSet(1, make)).toBe('x');
    expect(c.getOrSet(1, make)).toBe('x');
    expect(built).toBe(1);
  });
});

describe('countsKey', () => {
  it('is a number, distinct for distinct vectors, when counts are below 8', () => {
    const seen = new Set<number | string>();
    for (let a = 0; a < 8; a++) for (let b = 0; b < 8; b++) seen.add(countsKey(Uint8Array.of(a, b, 1)));
    expect(seen.size).toBe(64);
    for (const k of seen) expect(typeof k).toBe('number');
  });

  it('falls back to text when a count or the length does not fit a number exactly', () => {
    expect(countsKey(Uint8Array.of(1, 9))).toBe('1,9');
    expect(typeof countsKey(new Uint8Array(20))).toBe('string');
  });
});
