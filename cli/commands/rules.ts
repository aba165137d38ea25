import { resolve } from 'node:path';
import { diffRuleSets, formatRuleIssue, formatRuleSetDiff } from '../../engine/rules/index.js';
import { loadRuleSetFile, type RuleSetFile } from '../../formats/ruleset-file.js';
import { type CliIo, type Command, println, UsageError } from '../io.js';

interface Flags {
  json: boolean;
  strict: boolean;
  files: string[];
}

function parseFlags(argv: string[], command: string): Flags {
  const flags: Flags = { json: false, strict: false, files: [] };
  for (const arg of argv) {
    if (arg === '--json') flags.json = true;
    else if (arg === '--strict') flags.strict = true;
    else if (arg.startsWith('-') && arg !== '-')
      throw new UsageError(`unknown option ${arg} for "${command}"`);
    else flags.files.push(arg);
  }
  return flags;
}

function summary(file: RuleSetFile): string {
  const r = file.value!;
  const counts = [
    `${r.residues.length} residues`,
    `${r.acyls.length} acyl groups`,
    `${r.smallLosses.length} small losses`,
    `${r.crossRing.length} cross-ring rules`,
    `${r.adductLosses.length} adduct losses`,
    `${r.aglycones.length} aglycones`,
  ];
  return `${r.name} ${r.version} (sha256 ${file.sha256}): ${counts.join(', ')}`;
}

/**
 * `peel rules check FILE [--json] [--strict]`: validates a rule file and lists every problem with its
 * line. Exit 0 when valid (with `--strict`, also free of warnings), 1 otherwise.
 */
export const rulesCheckCommand: Command = async (argv: string[], io: CliIo) => {
  const flags = parseFlags(argv, 'rules check');
  if (flags.files.length !== 1) throw new UsageError('give exactly one rule file: peel rules check FILE');
  const path = resolve(io.cwd, flags.files[0]!);
  const file = await loadRuleSetFile(path);
  const failed = file.errors.length > 0 || (flags.strict && file.warnings.length > 0);
  if (flags.json) {
    const out = {
      file: path,
      valid: file.errors.length === 0,
      ruleset: file.ref ?? null,
      errors: file.errors,
      warnings: file.warnings,
    };
    println(io.stdout, JSON.stringify(out, null, 2));
    return failed ? 1 : 0;
  }
  for (const issue of [...file.errors, ...file.warnings]) println(io.stdout, formatRuleIssue(issue));
  if (file.value) {
    const w = file.warnings.length;
    println(io.stdout, `${flags.files[0]}: valid, ${summary(file)}${w > 0 ? `; ${w} warning(s)` : ''}`);
  } else {
    println(
      io.stdout,
      `${flags.files[0]}: invalid, ${file.errors.length} error(s), ${file.warnings.length} warning(s)`,
    );
  }
  return failed ? 1 : 0;
};

/**
 * `peel rules diff OLD NEW [--json] [--strict]`: what changed between two rule files (entries added,
 * removed, changed; settings) and whether the version was bumped enough. Exit 0 when both files are valid
 * (with `--strict`, also when the version bump matches the changes), 1 otherwise.
 */
export const rulesDiffCommand: Command = async (argv: string[], io: CliIo) => {
  const flags = parseFlags(argv, 'rules diff');
  if (flags.files.length !== 2) throw new UsageError('give two rule files: peel rules diff OLD NEW');
  const [a, b] = await Promise.all(flags.files.map((f) => loadRuleSetFile(resolve(io.cwd, f))));
  const bad = [a!, b!].filter((f) => !f.value);
  if (bad.length > 0) {
    for (const f of bad) for (const issue of f.errors) println(io.stderr, formatRuleIssue(issue));
    println(
      io.stderr,
      `peel rules diff: ${bad.map((f) => f.path).join(' and ')} not valid; run "peel rules check" on it`,
    );
    return 1;
  }
  const diff = diffRuleSets(a!.value!, b!.value!);
  if (flags.json) {
    println(io.stdout, JSON.stringify({ ...diff, from: a!.ref, to: b!.ref }, null, 2));
  } else {
    println(io.stdout, formatRuleSetDiff(diff));
  }
  return flags.strict && diff.warnings.length > 0 ? 1 : 0;
};
