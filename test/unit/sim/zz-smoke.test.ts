import { test } from 'vitest';
import { generateSet } from '../../../bench/sim/generate.js';
test('smoke', () => {
  const t0 = performance.now();
  const set = generateSet({ count: 10000, seed: 1, includePeaks: false });
  const dt = performance.now() - t0;
  console.log('10k in', dt.toFixed(0), 'ms');
  const s = generateSet({ count: 6, seed: 7, includePeaks: true });
  for (const x of s) console.log(JSON.stringify(x.truth.description), x.truth.ionType, x.spectrum.precursor, x.spectrum.peaks.length, '\n', x.truth.peaks!.filter(p=>!p.kinds.includes('noise')).map(p => `${p.mz.toFixed(4)} ${p.intensity.toFixed(0)} ${p.labels.join('|')}`).join('\n'));
  const counts = new Map<string, number>();
  for (const x of set) counts.set(x.truth.ionType, (counts.get(x.truth.ionType) ?? 0) + 1);
  console.log(counts);
  console.log('max peaks', Math.max(...set.map(x => x.spectrum.peaks.length)), 'mean', set.reduce((a,x)=>a+x.spectrum.peaks.length,0)/set.length);
});
