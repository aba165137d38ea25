import { describe, expect, it } from 'vitest';
import { Rng, seedOf } from '../../../bench/sim/prng.js';

describe('simulator PRNG (xoshiro128**)', () => {
  it('gives the same stream for the same seed and another for another seed', () => {
    const a = new Rng(42);
    const b = new Rng(42);
    const c = new Rng(43);
    const xs = Array.from({ length: 20 }, () => a.nextUint32());
    expect(Array.from({ length: 20 }, () => b.nextUint32())).toEqual(xs);
    expect(Array.from({ length: 20 }, () => c.nextUint32())).not.toEqual(xs);
  });

  it('seeds from strings deterministically', () => {
    expect(seedOf('abc')).toBe(seedOf('abc'));
    expect(seedOf('abc')).not.toBe(seedOf('abd'));
    expect(new Rng('x:1').next()).toBe(new Rng('x:1').next());
  });

  it('draws in range with the expected moments', () => {
    const r = new Rng(7);
    let sum = 0;
    let sumSq = 0;
    const n = 20000;
    for (let i = 0; i < n; i++) {
      const u = r.next();
      expect(u).toBeGreaterThanOrEqual(0);
      expect(u).toBeLessThan(1);
      sum += u;
      const z = r.normal();
      sumSq += z * z;
    }
    expect(sum / n).toBeCloseTo(0.5, 1);
    expect(sumSq / n).toBeCloseTo(1, 1);
    for (let i = 0; i < 1000; i++) {
      const k = r.int(3, 5);
      expect([3, 4, 5]).toContain(k);
    }
  });

  it('weighted picks follow the weights and refuse all-zero weights', () => {
    const r = new Rng(11);
    let a = 0;
    for (let i = 0; i < 10000; i++) if (r.weighted(['a', 'b'], (x) => (x === 'a' ? 3 : 1)) === 'a') a++;
    expect(a / 10000).toBeGreaterThan(0.72);
    expect(a / 10000).toBeLessThan(0.78);
    expect(() => r.weighted(['a'], () => 0)).toThrow(RangeError);
  });
});
