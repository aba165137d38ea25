import { formatFormula, parseFormula } from '../chem/formula.js';
import { canonicalJson } from './canonical.js';
import type { RuleSet } from './schema.js';

/** The parts of a rule set a diff reports on. */
export type RuleSetSection =
  | 'meta'
  | 'residues'
  | 'acyls'
  | 'smallLosses'
  | 'crossRing'
  | 'adductLosses'
  | 'aglycones'
  | 'ionTypes'
  | 'elements'
  | 'tolerances'
  | 'limits'
  | 'cleanup'
  | 'scoring'
  | 'radicalAglycone';

/** How much a change can alter results, and so which part of the semantic version it calls for. */
export type ChangeImpact = 'major' | 'minor' | 'patch';

/** One difference between two rule sets. */
export interface RuleSetChange {
  section: RuleSetSection;
  kind: 'added' | 'removed' | 'changed';
  /** The entry's name (residue, aglycone, ion type, element…) or the setting's key. */
  name: string;
  /** For `changed`: the fields that differ, with their values before and after. */
  fields?: { field: string; before: unknown; after: unknown }[];
  impact: ChangeImpact;
}

/** A warning about how the versions of two rule sets relate to their content. */
export interface RuleDiffWarning {
  code: 'version-not-bumped' | 'version-bump-too-small' | 'version-downgrade' | 'name-changed';
  message: string;
}

/** The semantic difference between two rule sets. */
export interface RuleSetDiff {
  from: { name: string; version: string };
  to: { name: string; version: string };
  changes: RuleSetChange[];
  /** The part of the version that changed from `from` to `to`. */
  versionChange: 'major' | 'minor' | 'patch' | 'prerelease' | 'none' | 'downgrade';
  /** The smallest version bump the changes call for (`none` when the content is the same). */
  requiredBump: ChangeImpact | 'none';
  warnings: RuleDiffWarning[];
}

const NAMED = ['residues', 'acyls', 'smallLosses', 'crossRing', 'adductLosses', 'aglycones'] as const;
const SETTINGS = ['tolerances', 'limits', 'cleanup', 'scoring'] as const;
/** Fields that document an entry without changing what the engine does. */
const DOC_FIELDS = new Set(['source', 'description']);
/** Fields whose change makes existing identifications disappear or change meaning. */
const BREAKING_FIELDS = new Set(['formula', 'residue', 'ionType', 'radical']);

/**
 * Compares two validated rule sets entry by entry (by name) and setting by setting, and checks that the
 * version was bumped as the changes require: removing an entry or changing a formula calls for a major
 * bump, adding entries or changing settings a minor one, documentation-only changes a patch.
 */
export function diffRuleSets(from: RuleSet, to: RuleSet): RuleSetDiff {
  const changes: RuleSetChange[] = [];

  for (const section of NAMED) {
    const before = new Map<string, Record<string, unknown>>(
      (from[section] as { name: string }[]).map((e) => [e.name, e as Record<string, unknown>]),
    );
    const after = new Map<string, Record<string, unknown>>(
      (to[section] as { name: string }[]).map((e) => [e.name, e as Record<string, unknown>]),
    );
    for (const [name, a] of before) {
      const b = after.get(name);
      if (!b) {
        changes.push({ section, kind: 'removed', name, impact: 'major' });
        continue;
      }
      const fields = diffFields(a, b);
      if (fields.length > 0)
        changes.push({ section, kind: 'changed', name, fields, impact: entryImpact(fields) });
    }
    for (const name of after.keys()) {
      if (!before.has(name)) changes.push({ section, kind: 'added', name, impact: 'minor' });
    }
  }

  for (const polarity of ['positive', 'negative'] as const) {
    const a = new Set(from.ionTypes[polarity]);
    const b = new Set(to.ionTypes[polarity]);
    for (const t of a)
      if (!b.has(t)) changes.push({ section: 'ionTypes', kind: 'removed', name: t, impact: 'major' });
    for (const t of b)
      if (!a.has(t)) changes.push({ section: 'ionTypes', kind: 'added', name: t, impact: 'minor' });
  }

  for (const which of ['aglycone', 'precursor'] as const) {
    const a = from.elements[which];
    const b = to.elements[which];
    for (const el of new Set([...Object.keys(a), ...Object.keys(b)])) {
      const name = `${which}.${el}`;
      if (!(el in b)) changes.push({ section: 'elements', kind: 'removed', name, impact: 'minor' });
      else if (!(el in a)) changes.push({ section: 'elements', kind: 'added', name, impact: 'minor' });
      else if (canonicalJson(a[el]) !== canonicalJson(b[el])) {
        changes.push({
          section: 'elements',
          kind: 'changed',
          name,
          fields: [{ field: 'range', before: a[el], after: b[el] }],
          impact: 'minor',
        });
      }
    }
  }

  for (const section of SETTINGS) {
    const a = from[section] as Record<string, unknown>;
    const b = to[section] as Record<string, unknown>;
    for (const f of diffFields(a, b)) {
      changes.push({ section, kind: 'changed', name: f.field, fields: [f], impact: 'minor' });
    }
  }
  if (from.radicalAglycone !== to.radicalAglycone) {
    changes.push({
      section: 'radicalAglycone',
      kind: 'changed',
      name: 'radicalAglycone',
      fields: [{ field: 'radicalAglycone', before: from.radicalAglycone, after: to.radicalAglycone }],
      impact: 'minor',
    });
  }
  if ((from.description ?? '') !== (to.description ?? '')) {
    changes.push({
      section: 'meta',
      kind: 'changed',
      name: 'description',
      fields: [{ field: 'description', before: from.description, after: to.description }],
      impact: 'patch',
    });
  }

  const requiredBump = changes.some((c) => c.impact === 'major')
    ? 'major'
    : changes.some((c) => c.impact === 'minor')
      ? 'minor'
      : changes.length > 0
        ? 'patch'
        : 'none';
  const versionChange = compareVersions(from.version, to.version);
  const warnings: RuleDiffWarning[] = [];
  if (from.name !== to.name) {
    warnings.push({
      code: 'name-changed',
      message: `the rule set is named "${from.name}" before and "${to.name}" after`,
    });
  }
  if (versionChange === 'downgrade') {
    warnings.push({
      code: 'version-downgrade',
      message: `version goes down from ${from.version} to ${to.version}`,
    });
  } else if (requiredBump !== 'none' && versionChange === 'none') {
    warnings.push({
      code: 'version-not-bumped',
      message: `the content changed (${changes.length} change(s)) but the version is still ${to.version}`,
    });
  } else if (requiredBump !== 'none' && rank(versionChange) < rank(requiredBump)) {
    warnings.push({
      code: 'version-bump-too-small',
      message: `the changes call for a ${requiredBump} version bump; ${from.version} → ${to.version} is a ${versionChange} bump`,
    });
  }
  return {
    from: { name: from.name, version: from.version },
    to: { name: to.name, version: to.version },
    changes,
    versionChange,
    requiredBump,
    warnings,
  };
}

function rank(v: string): number {
  return v === 'major' ? 3 : v === 'minor' ? 2 : v === 'patch' ? 1 : 0;
}

function entryImpact(fields: { field: string }[]): ChangeImpact {
  if (fields.some((f) => BREAKING_FIELDS.has(f.field))) return 'major';
  if (fields.every((f) => DOC_FIELDS.has(f.field))) return 'patch';
  return 'minor';
}

/** Fields of two entries that differ; formulas compare by content (`H10C6O5` equals `C6H10O5`). */
function diffFields(a: Record<string, unknown>, b: Record<string, unknown>) {
  const out: { field: string; before: unknown; after: unknown }[] = [];
  for (const field of new Set([...Object.keys(a), ...Object.keys(b)])) {
    const x = a[field];
    const y = b[field];
    const same =
      field === 'formula' && typeof x === 'string' && typeof y === 'string'
        ? sameFormula(x, y)
        : canonicalJson(x) === canonicalJson(y);
    if (!same) out.push({ field, before: x, after: y });
  }
  return out;
}

function sameFormula(a: string, b: string): boolean {
  try {
    return formatFormula(parseFormula(a)) === formatFormula(parseFormula(b));
  } catch {
    return a === b;
  }
}

/** Which part of a semantic version changed (pre-release tags count as `prerelease`). */
export function compareVersions(a: string, b: string): RuleSetDiff['versionChange'] {
  const parse = (v: string) => {
    const m = /^(\d+)\.(\d+)\.(\d+)(?:-(.+))?$/.exec(v);
    return m ? { n: [Number(m[1]), Number(m[2]), Number(m[3])], pre: m[4] } : { n: [0, 0, 0], pre: v };
  };
  const x = parse(a);
  const y = parse(b);
  const parts = ['major', 'minor', 'patch'] as const;
  for (let i = 0; i < 3; i++) {
    if (y.n[i]! > x.n[i]!) return parts[i]!;
    if (y.n[i]! < x.n[i]!) return 'downgrade';
  }
  if (x.pre === y.pre) return 'none';
  // 1.0.0-rc.1 → 1.0.0 is a release; 1.0.0 → 1.0.0-rc.1 goes back.
  if (x.pre !== undefined && y.pre === undefined) return 'prerelease';
  if (x.pre === undefined && y.pre !== undefined) return 'downgrade';
  return 'prerelease';
}

/** A short text rendering of a diff, one line per change, for the command line. */
export function formatRuleSetDiff(diff: RuleSetDiff): string {
  const lines = [`${diff.from.name} ${diff.from.version} → ${diff.to.name} ${diff.to.version}`];
  if (diff.changes.length === 0) lines.push('  no changes in content');
  const sign = { added: '+', removed: '-', changed: '~' } as const;
  for (const c of diff.changes) {
    const detail = c.fields
      ? ': ' + c.fields.map((f) => `${f.field} ${show(f.before)} → ${show(f.after)}`).join(', ')
      : '';
    lines.push(`  ${sign[c.kind]} ${c.section} ${c.name}${detail} [${c.impact}]`);
  }
  lines.push(`  version change: ${diff.versionChange}; the changes call for: ${diff.requiredBump}`);
  for (const w of diff.warnings) lines.push(`  warning ${w.code}: ${w.message}`);
  return lines.join('\n');
}

function show(v: unknown): string {
  if (v === undefined) return '(none)';
  const s = typeof v === 'string' ? JSON.stringify(v) : canonicalJson(v);
  return s.length > 80 ? s.slice(0, 77) + '…' : s;
}
