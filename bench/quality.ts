// Quality benchmark (issue 3): Peel's engine on a seeded simulated set of glycoside MS2 spectra and decoys
// (bench/sim), scored with the default rule set and judged against the simulator's ground truth.
// `npm run bench -- quality [--count N] [--seed S] [--decoys F] [--rules PATH] [--write DIR] [--failures N]`.
//
// For engine tuning from a quick script:
//   const { report } = await runQuality({ count: 500, seed: 7 });
//   report.failures.filter((f) => f.kind.startsWith('residues'))
import { performance } from 'node:perf_hooks';
import type { SpectrumResult } from '../engine/report/result.js';
import { compileRuleSet } from '../engine/rules/compile.js';
import type { RuleSet } from '../engine/rules/schema.js';
import { scoreSpectrum } from '../engine/score/score-spectrum.js';
import { defaultRuleSetPath, loadRuleSetFile } from '../formats/ruleset-file.js';
import { machineLine, writeSection } from './report.js';
import { evaluate, formatQualityMarkdown, type QualityReport } from './sim/evaluate.js';
import { writeSetFiles } from './sim/files.js';
import { GENERATOR, generateSet, type SimSetOptions, type SimulatedSpectrum } from './sim/generate.js';

export { evaluate, formatQualityMarkdown };
export type { QualityReport };

/** Options of {@link runQuality}. */
export interface QualityOptions {
  /** @defaultValue 2000 */
  count?: number;
  /** @defaultValue 20261202 */
  seed?: number | string;
  /** @defaultValue 0.1 */
  decoyFraction?: number;
  /** Rule file. @defaultValue the default rule set */
  rulesPath?: string;
  /** A rule set already loaded (wins over `rulesPath`). */
  rules?: RuleSet;
  /** Extra generator options. */
  sim?: Partial<SimSetOptions>;
}

/** What one quality run produced. */
export interface QualityRun {
  report: QualityReport;
  set: SimulatedSpectrum[];
  results: SpectrumResult[];
  rules: RuleSet;
  generateMs: number;
  scoreMs: number;
}

/** Loads a rule set file or throws with its first error. */
export async function loadRules(path = defaultRuleSetPath()): Promise<RuleSet> {
  const file = await loadRuleSetFile(path);
  if (!file.value) {
    const e = file.errors[0];
    throw new Error(
      `rule set ${path} is invalid: ${e ? `${e.code} at ${e.path}: ${e.message}` : 'unknown error'}`,
    );
  }
  return file.value;
}

/** Generates a seeded set, scores every spectrum with the engine and evaluates the results. */
export async function runQuality(o: QualityOptions = {}): Promise<QualityRun> {
  const rules = o.rules ?? (await loadRules(o.rulesPath));
  const compiled = compileRuleSet(rules);
  const t0 = performance.now();
  const set = generateSet({
    count: o.count ?? 2000,
    seed: o.seed ?? 20261202,
    decoyFraction: o.decoyFraction ?? 0.1,
    ...o.sim,
  });
  const t1 = performance.now();
  const results = set.map((x) => scoreSpectrum(x.spectrum, compiled));
  const t2 = performance.now();
  const report = evaluate(
    results,
    set.map((x) => x.truth),
    { libraryNames: rules.aglycones.map((a) => a.name) },
  );
  return { report, set, results, rules, generateMs: t1 - t0, scoreMs: t2 - t1 };
}

function arg(args: string[], name: string): string | undefined {
  const i = args.indexOf(name);
  return i >= 0 ? args[i + 1] : undefined;
}

export async function run(args: string[]): Promise<void> {
  const count = Number(arg(args, '--count') ?? 2000);
  const seedText = arg(args, '--seed') ?? '20261202';
  const seed = /^\d+$/.test(seedText) ? Number(seedText) : seedText;
  const decoyFraction = Number(arg(args, '--decoys') ?? 0.1);
  const showFailures = Number(arg(args, '--failures') ?? 0);
  const rulesPath = arg(args, '--rules');
  const writeDir = arg(args, '--write');
  if (!Number.isInteger(count) || count < 1 || !(decoyFraction >= 0 && decoyFraction <= 1)) {
    throw new Error(
      'usage: npm run bench -- quality [--count N] [--seed S] [--decoys 0..1] [--rules PATH] [--write DIR] [--failures N]',
    );
  }
  const q = await runQuality({ count, seed, decoyFraction, ...(rulesPath ? { rulesPath } : {}) });
  const { report, rules } = q;
  if (writeDir) {
    const paths = writeSetFiles(writeDir, `sim-${seed}-${count}`, q.set, { seed }, { json: true });
    console.log(`wrote ${paths.join(', ')}`);
  }
  const m = report.metrics;
  const lines = [
    '## Quality on a simulated set',
    '',
    `Machine: ${await machineLine()}.`,
    '',
    `Set: ${count} simulated spectra (${GENERATOR}), seed ${seed}: ${m.glycosides.n} glycosides and ${m.decoys.n} decoys ` +
      `(peptides, lipids, aglycones alone, random peaks); 1–5 residues, 0–1 acyl groups, O- and C-glycosides, ` +
      'library and invented (unknown) aglycones, every ion type of the rule set, 2–4 ppm systematic plus random ' +
      'mass error, isotope peaks, noise peaks, about 10 % co-isolated ions. ' +
      `Rule set ${rules.name} ${rules.version}. Generated in ${(q.generateMs / 1000).toFixed(1)} s; scored in ` +
      `${(q.scoreMs / 1000).toFixed(1)} s (${((count * 1000) / Math.max(1, q.scoreMs)).toFixed(0)} spectra/s, one core, including the ` +
      'spectra that end unassigned).',
    '',
    'A candidate is correct when its aglycone formula equals the Y0 ion formula of the truth (in the ' +
      "precursor's adduct family), its name (or one of its tied alternatives) is the truth's name — or `unknown` " +
      'for an invented aglycone — and its residue multiset (residue and O/C linkage) and acyl multiset match. ' +
      'Ranks hold distinct structures: the other stackings of a candidate are listed with it, not ranked. ' +
      "Topology is reported separately (the candidate's best stacking, bracket notation compared canonically). " +
      'The simulator is written ' +
      'independently of the engine (its own tables and fragmentation model); its data are simulated.',
    '',
  ];
  lines.push(formatQualityMarkdown(report));
  const md = lines.join('\n');
  writeSection('quality', md);
  console.log(md);
  if (showFailures > 0) {
    console.log('\nFailures:');
    for (const fl of report.failures.slice(0, showFailures)) {
      console.log(
        `${fl.id}\t${fl.kind}\t${fl.detail}\t| truth: ${fl.truth}${fl.correctRank ? ` (correct at rank ${fl.correctRank})` : ''}`,
      );
    }
  }
}
