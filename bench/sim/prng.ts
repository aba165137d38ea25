/**
 * A small seeded pseudo-random generator for the simulated data sets: xoshiro128** (Blackman & Vigna 2018,
 * "Scrambled linear pseudorandom number generators", public-domain reference code), seeded through
 * splitmix32 so any 32-bit integer or string gives a well-mixed state. The same seed always gives the same
 * data set on every platform: only 32-bit integer arithmetic (`Math.imul`, `>>>`) is used.
 */

/** Mixes a 32-bit state one step (splitmix32); used only for seeding. */
function splitmix32(state: number): [number, number] {
  const next = (state + 0x9e3779b9) | 0;
  let z = next;
  z = Math.imul(z ^ (z >>> 16), 0x85ebca6b);
  z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35);
  z ^= z >>> 16;
  return [next, z >>> 0];
}

/**
 * mulberry32: a tiny seeded generator of uniform numbers in [0, 1) for the benchmarks' own simulated inputs
 * (masses, file contents, service batches) where the data-set generator's richer {@link Rng} is not needed.
 */
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** A 32-bit seed from a number or a string (FNV-1a over UTF-16 code units for strings). */
export function seedOf(seed: number | string): number {
  if (typeof seed === 'number') return (Math.trunc(seed) ^ Math.trunc(seed / 2 ** 32)) >>> 0;
  let h = 0x811c9dc5;
  for (let i = 0; i < seed.length; i++) h = Math.imul(h ^ seed.charCodeAt(i), 0x01000193);
  return h >>> 0;
}

/** A seeded random source with the draws the generator needs. */
export class Rng {
  private a: number;
  private b: number;
  private c: number;
  private d: number;
  private spareNormal: number | undefined;

  constructor(seed: number | string) {
    let s = seedOf(seed);
    const out: number[] = [];
    for (let i = 0; i < 4; i++) {
      const [next, z] = splitmix32(s);
      s = next;
      out.push(z);
    }
    [this.a, this.b, this.c, this.d] = out as [number, number, number, number];
    if ((this.a | this.b | this.c | this.d) === 0) this.a = 1;
  }

  /** Next raw 32-bit unsigned integer (xoshiro128**). */
  nextUint32(): number {
    const result = Math.imul(rotl(Math.imul(this.b, 5), 7), 9) >>> 0;
    const t = this.b << 9;
    this.c ^= this.a;
    this.d ^= this.b;
    this.b ^= this.c;
    this.a ^= this.d;
    this.c ^= t;
    this.d = rotl(this.d, 11);
    return result;
  }

  /** Uniform in [0, 1). */
  next(): number {
    return this.nextUint32() / 4294967296;
  }

  /** Uniform in [lo, hi). */
  uniform(lo: number, hi: number): number {
    return lo + (hi - lo) * this.next();
  }

  /** Uniform integer in [lo, hi] (both included). */
  int(lo: number, hi: number): number {
    return lo + Math.floor(this.next() * (hi - lo + 1));
  }

  /** True with probability p. */
  chance(p: number): boolean {
    return this.next() < p;
  }

  /** One element, uniformly. */
  pick<T>(items: readonly T[]): T {
    if (items.length === 0) throw new RangeError('pick from an empty list');
    return items[Math.floor(this.next() * items.length)]!;
  }

  /** One element, with probability proportional to its weight. */
  weighted<T>(items: readonly T[], weight: (item: T) => number): T {
    let total = 0;
    for (const it of items) total += Math.max(0, weight(it));
    if (!(total > 0)) throw new RangeError('weighted pick with no positive weight');
    let r = this.next() * total;
    for (const it of items) {
      r -= Math.max(0, weight(it));
      if (r < 0) return it;
    }
    return items[items.length - 1]!;
  }

  /** Standard normal deviate (Marsaglia polar method). */
  normal(mean = 0, sd = 1): number {
    if (this.spareNormal !== undefined) {
      const v = this.spareNormal;
      this.spareNormal = undefined;
      return mean + sd * v;
    }
    let u = 0;
    let v = 0;
    let s = 0;
    do {
      u = 2 * this.next() - 1;
      v = 2 * this.next() - 1;
      s = u * u + v * v;
    } while (s >= 1 || s === 0);
    const k = Math.sqrt((-2 * Math.log(s)) / s);
    this.spareNormal = v * k;
    return mean + sd * u * k;
  }

  /** Log-normal deviate: exp(N(mu, sigma)). */
  logNormal(mu: number, sigma: number): number {
    return Math.exp(this.normal(mu, sigma));
  }

  /** Log-uniform in [lo, hi) (lo > 0). */
  logUniform(lo: number, hi: number): number {
    return Math.exp(this.uniform(Math.log(lo), Math.log(hi)));
  }

  /** A new generator whose stream depends only on this one's next draw (for independent sub-streams). */
  fork(): Rng {
    return new Rng(this.nextUint32());
  }

  /** Shuffles in place (Fisher–Yates) and returns the array. */
  shuffle<T>(items: T[]): T[] {
    for (let i = items.length - 1; i > 0; i--) {
      const j = Math.floor(this.next() * (i + 1));
      [items[i], items[j]] = [items[j]!, items[i]!];
    }
    return items;
  }
}

function rotl(x: number, k: number): number {
  return (x << k) | (x >>> (32 - k));
}
