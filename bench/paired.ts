// Developer tool (writes nothing to docs/): two builds of the engine compared in ONE process, spectrum by
// spectrum, on the same seeded simulated spectra — for telling a real speed change from the noise of a shared
// machine, where two runs of the same build can differ by a third.
// `npm run bench -- paired --against DIR [--count N] [--rounds R] [--seed S]`
// DIR is another checkout's root with its `dist/` built (e.g. `git worktree add /tmp/base HEAD~1`, then
// `npm run build` there with this checkout's node_modules linked in).
//
// Each round scores every spectrum with both builds back to back, alternating which goes first. A slow spell
// of the machine then hits both alike; the per-spectrum minimum over the rounds filters the rest. The results
// of both builds are compared too: a pure speed change must leave every result as it was.
import { isDeepStrictEqual } from 'node:util';
import { resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import type { SpectrumResult } from '../engine/report/result.js';
import type { Spectrum } from '../engine/spectrum/spectrum.js';
import { packageRoot } from '../formats/package-root.js';
import { generateSet } from './sim/generate.js';

type Scorer = (s: Spectrum) => SpectrumResult;

/** Loads a build's engine and default rule set from a checkout root (its `dist/`). */
async function loadBuild(root: string): Promise<Scorer> {
  const at = (p: string) => pathToFileURL(resolve(root, 'dist', p)).href;
  const engine = (await import(at('engine/index.js'))) as typeof import('../engine/index.js');
  const files = (await import(at('formats/ruleset-file.js'))) as typeof import('../formats/ruleset-file.js');
  const file = await files.loadRuleSetFile(files.defaultRuleSetPath());
  if (!file.value) throw new Error(`the default rule set of ${root} does not load`);
  const compiled = engine.compileRuleSet(file.value);
  return (s) => engine.scoreSpectrum(s, compiled);
}

/** Per-spectrum times of two builds over interleaved rounds. */
export interface PairedTimes {
  /** Sum over spectra of each spectrum's fastest time (ms). */
  minBase: number;
  minThis: number;
  /** Sum of every timed call (ms). */
  totalBase: number;
  totalThis: number;
  /** Spectra whose results differ between the builds. */
  differing: string[];
}

/** Times two scorers on the same spectra, interleaved per spectrum, after `warm` untimed passes. */
export function pairedTimes(
  base: Scorer,
  self: Scorer,
  spectra: readonly Spectrum[],
  rounds: number,
  warm = 2,
): PairedTimes {
  const differing: string[] = [];
  for (let k = 0; k < warm; k++) {
    for (const s of spectra) {
      const a = base(s);
      const b = self(s);
      if (k === 0 && !isDeepStrictEqual(a, b)) differing.push(s.id);
    }
  }
  const minBase = new Float64Array(spectra.length).fill(Number.POSITIVE_INFINITY);
  const minThis = new Float64Array(spectra.length).fill(Number.POSITIVE_INFINITY);
  let totalBase = 0;
  let totalThis = 0;
  const time = (f: Scorer, s: Spectrum) => {
    const t0 = performance.now();
    f(s);
    return performance.now() - t0;
  };
  for (let r = 0; r < rounds; r++) {
    spectra.forEach((s, i) => {
      const baseFirst = (r + i) % 2 === 0;
      const a = baseFirst ? time(base, s) : 0;
      const b = time(self, s);
      const a2 = baseFirst ? a : time(base, s);
      totalBase += a2;
      totalThis += b;
      if (a2 < minBase[i]!) minBase[i] = a2;
      if (b < minThis[i]!) minThis[i] = b;
    });
  }
  const sum = (x: Float64Array) => x.reduce((acc, v) => acc + v, 0);
  return { minBase: sum(minBase), minThis: sum(minThis), totalBase, totalThis, differing };
}

export async function run(args: string[]): Promise<void> {
  const arg = (name: string) => {
    const i = args.indexOf(name);
    return i >= 0 ? args[i + 1] : undefined;
  };
  const against = arg('--against');
  const count = Number(arg('--count') ?? 1500);
  const rounds = Number(arg('--rounds') ?? 4);
  const seedText = arg('--seed') ?? '20261202';
  if (!against || !Number.isInteger(count) || count < 1 || !Number.isInteger(rounds) || rounds < 1) {
    throw new Error(
      'usage: npm run bench -- paired --against DIR [--count N] [--rounds R] [--seed S] (DIR: a checkout with dist/ built)',
    );
  }
  const seed = /^\d+$/.test(seedText) ? Number(seedText) : seedText;
  const base = await loadBuild(against);
  const self = await loadBuild(packageRoot());
  // The score-speed conditions: ≤ 100 peaks, precursor ions ≤ 1,200 Da. Simulated data (bench/sim).
  const spectra = generateSet({ count, seed, decoyFraction: 0.1 })
    .map((x) => x.spectrum)
    .filter((s) => s.peaks.length <= 100 && s.precursor.mz * Math.abs(s.precursor.charge ?? 1) <= 1200);
  const t = pairedTimes(base, self, spectra, rounds);
  const ms = (x: number) => `${x.toFixed(0)} ms`;
  console.log(
    `${spectra.length} simulated spectra (seed ${seed}), ${rounds} interleaved rounds, one process\n` +
      `sum of per-spectrum minima: base ${ms(t.minBase)}, this ${ms(t.minThis)} → this build ×${(t.minBase / t.minThis).toFixed(3)} as fast\n` +
      `all timed calls:            base ${ms(t.totalBase)}, this ${ms(t.totalThis)} → ×${(t.totalBase / t.totalThis).toFixed(3)}\n` +
      (t.differing.length === 0
        ? 'results identical for every spectrum'
        : `results differ for ${t.differing.length} spectra, e.g. ${t.differing.slice(0, 5).join(', ')}`),
  );
}
