// Writes a simulated set to files: `<out>/<name>.mgf`, `<name>.json` (with --json) and `<name>.truth.json`.
//   npm run -s build && node dist/bench/gen-sim.js [--count N] [--seed S] [--decoys F] [--out DIR] [--name NAME]
//                                                  [--json] [--peaks]
//   npm run -s build && node dist/bench/gen-sim.js --demo [--out demo/data]
// Every file says the data are simulated. The demo writes the fictional berry-pigment batch of demo/README.md.
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { toJsonDocument, toMgf, toTruthFile, writeSetFiles } from './sim/files.js';
import { generateSet } from './sim/generate.js';
import { buildDemoSet, DEMO_SCENARIO } from './sim/scenario.js';

function arg(args: string[], name: string): string | undefined {
  const i = args.indexOf(name);
  return i >= 0 ? args[i + 1] : undefined;
}

/** Default seed of the demo batch (demo/README.md names it). */
export const DEMO_SEED = 'fernhollow-2026';

/** Writes the demo batch: positive and negative MGF, a small JSON sample, and the truth file. */
export function writeDemo(dir: string, seed: string = DEMO_SEED): string[] {
  const set = buildDemoSet(seed);
  mkdirSync(dir, { recursive: true });
  const p = { seed, comments: DEMO_SCENARIO };
  const pos = set.filter((x) => x.spectrum.polarity === 'positive');
  const neg = set.filter((x) => x.spectrum.polarity === 'negative');
  const files: [string, string][] = [
    [
      'berry-pigments-pos.mgf',
      toMgf(
        pos.map((x) => x.spectrum),
        p,
      ),
    ],
    [
      'berry-pigments-neg.mgf',
      toMgf(
        neg.map((x) => x.spectrum),
        p,
      ),
    ],
    // A small JSON version: the first selection's spectra, both polarities.
    [
      'berry-pigments-BB-01.json',
      toJsonDocument(
        set.filter((x) => x.spectrum.id.includes('-BB-01-')).map((x) => x.spectrum),
        p,
      ),
    ],
    ['berry-pigments.truth.json', `${JSON.stringify(toTruthFile(set, p), null, 1)}\n`],
  ];
  return files.map(([name, text]) => {
    const path = join(dir, name);
    writeFileSync(path, text);
    return path;
  });
}

export function main(args: string[]): void {
  const out = arg(args, '--out');
  if (args.includes('--demo')) {
    const paths = writeDemo(out ?? 'demo/data', arg(args, '--seed') ?? DEMO_SEED);
    console.log(`wrote ${paths.join(', ')}`);
    return;
  }
  const count = Number(arg(args, '--count') ?? 1000);
  const seedText = arg(args, '--seed') ?? '1';
  const seed = /^\d+$/.test(seedText) ? Number(seedText) : seedText;
  const decoyFraction = Number(arg(args, '--decoys') ?? 0.1);
  if (!Number.isInteger(count) || count < 1 || !(decoyFraction >= 0 && decoyFraction <= 1)) {
    throw new Error(
      'usage: node dist/bench/gen-sim.js [--count N] [--seed S] [--decoys 0..1] [--out DIR] [--name NAME] [--json] [--peaks] | --demo [--out DIR]',
    );
  }
  const set = generateSet({ count, seed, decoyFraction, includePeaks: args.includes('--peaks') });
  const paths = writeSetFiles(
    out ?? '.',
    arg(args, '--name') ?? `sim-${seed}-${count}`,
    set,
    { seed },
    { json: args.includes('--json') },
  );
  console.log(`wrote ${paths.join(', ')}`);
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) main(process.argv.slice(2));
