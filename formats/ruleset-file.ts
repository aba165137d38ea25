import { createHash } from 'node:crypto';
import { readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { canonicalJson } from '../engine/rules/canonical.js';
import { type LoadRuleSetOptions, loadRuleSet, type RuleIssue } from '../engine/rules/load.js';
import type { RuleSet } from '../engine/rules/schema.js';
import type { RuleSetRef } from '../engine/report/result.js';
import { packageRoot } from './package-root.js';

/** A rule file read from disk: the rule set when valid, every issue, and its content hash. */
export interface RuleSetFile {
  path: string;
  value: RuleSet | undefined;
  errors: RuleIssue[];
  warnings: RuleIssue[];
  /** sha256 (hex) of the canonical JSON of the validated rule set; only when valid. */
  sha256?: string;
  /** `{ name, version, sha256 }` as results carry it; only when valid. */
  ref?: RuleSetRef;
}

/** Path of the default rule set shipped with Peel (`rules/default.yaml` under the package root). */
export function defaultRuleSetPath(): string {
  return join(packageRoot(), 'rules', 'default.yaml');
}

/**
 * sha256 of a validated rule set's canonical JSON (defaults filled in, keys sorted): the same content gives
 * the same hash whatever the file's format, layout, key order or comments.
 */
export function ruleSetSha256(rules: RuleSet): string {
  return createHash('sha256').update(canonicalJson(rules), 'utf8').digest('hex');
}

/** The reference results carry for a validated rule set. */
export function ruleSetRef(rules: RuleSet): RuleSetRef {
  return { name: rules.name, version: rules.version, sha256: ruleSetSha256(rules) };
}

/**
 * Reads and validates a rule file (YAML or JSON). Never throws for a bad or missing file: problems come
 * back as issues (a file that cannot be read gives one `unreadable` error).
 */
export async function loadRuleSetFile(
  path: string,
  options: Omit<LoadRuleSetOptions, 'file'> = {},
): Promise<RuleSetFile> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code ?? 'EIO';
    return {
      path,
      value: undefined,
      errors: [
        {
          code: 'unreadable',
          severity: 'error',
          message: `cannot read ${path} (${code})`,
          file: path,
          path: '',
        },
      ],
      warnings: [],
    };
  }
  const result = loadRuleSet(text, { ...options, file: path });
  if (!result.value) return { path, ...result };
  const ref = ruleSetRef(result.value);
  return { path, ...result, sha256: ref.sha256, ref };
}

/** Reads and validates the default rule set. */
export function loadDefaultRuleSet(options: Omit<LoadRuleSetOptions, 'file'> = {}): Promise<RuleSetFile> {
  return loadRuleSetFile(defaultRuleSetPath(), options);
}
