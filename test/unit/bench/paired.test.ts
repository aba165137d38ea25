// The paired comparison of two engine builds (bench/paired.ts): timings interleaved per spectrum, and a check
// that the builds give the same results.
import { describe, expect, it } from 'vitest';
import { pairedTimes } from '../../../bench/paired.js';
import type { SpectrumResult } from '../../../engine/report/result.js';
import type { Spectrum } from '../../../engine/spectrum/spectrum.js';

const spectrum = (id: string): Spectrum => ({ id, precursor: { mz: 500 }, peaks: [[100, 1]] });
const result = (id: string, status: SpectrumResult['status']): SpectrumResult => ({
  id,
  status,
  candidates: [],
  cautions: [],
});

/** A scorer that spins for `ms` milliseconds before answering. */
function slow(ms: number, status: (id: string) => SpectrumResult['status']) {
  let calls = 0;
  const f = (s: Spectrum): SpectrumResult => {
    calls++;
    const until = performance.now() + ms;
    while (performance.now() < until) {
      // busy wait: the time is the point
    }
    return result(s.id, status(s.id));
  };
  return { f, calls: () => calls };
}

describe('pairedTimes', () => {
  it('times both builds on every spectrum each round and sees which is slower', () => {
    const spectra = ['a', 'b', 'c'].map(spectrum);
    const base = slow(2, () => 'annotated');
    const self = slow(0.2, () => 'annotated');
    const t = pairedTimes(base.f, self.f, spectra, 3, 1);
    // One warm-up pass and three timed rounds, each spectrum once per build.
    expect(base.calls()).toBe(12);
    expect(self.calls()).toBe(12);
    expect(t.minBase).toBeGreaterThanOrEqual(6);
    expect(t.minThis).toBeLessThan(t.minBase);
    expect(t.totalBase).toBeGreaterThanOrEqual(18);
    expect(t.differing).toEqual([]);
  });

  it('names the spectra whose results differ between the builds', () => {
    const spectra = ['a', 'b', 'c'].map(spectrum);
    const base = slow(0, () => 'annotated');
    const self = slow(0, (id) => (id === 'b' ? 'unassigned' : 'annotated'));
    expect(pairedTimes(base.f, self.f, spectra, 1, 1).differing).toEqual(['b']);
  });
});
