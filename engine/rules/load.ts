import { isMap, isScalar, isSeq, LineCounter, type Node, parseDocument } from 'yaml';
import type { z } from 'zod';
import { ELEMENT_SYMBOLS } from '../chem/elements.js';
import {
  type Formula,
  FormulaError,
  formatFormula,
  isSubformula,
  parseFormula,
  rdbe,
} from '../chem/formula.js';
import { ION_TYPES, type IonType, ionType, parseIonType } from '../chem/ions.js';
import { type RuleSet, RuleSetSchema } from './schema.js';

/** Codes of the problems a rule file can have; tools classify by these, never by message text. */
export type RuleIssueCode =
  // The file and its text
  | 'unreadable'
  | 'syntax'
  | 'duplicate-key'
  | 'not-a-mapping'
  // The schema
  | 'missing-field'
  | 'wrong-type'
  | 'out-of-range'
  | 'invalid-format'
  | 'invalid-value'
  | 'unknown-key'
  // Chemistry and cross-references
  | 'formula-syntax'
  | 'formula-unknown-element'
  | 'formula-charged'
  | 'formula-odd-electron'
  | 'duplicate-name'
  | 'similar-name'
  | 'unknown-residue'
  | 'cross-ring-not-c-linked'
  | 'cross-ring-too-large'
  | 'unknown-ion-type'
  | 'ion-type-not-listed'
  | 'ion-type-polarity'
  | 'duplicate-ion-type'
  | 'adduct-ion-type-unused'
  | 'unknown-element'
  | 'bad-element-range'
  | 'element-range-large'
  | 'aglycone-outside-ranges'
  | 'precursor-range-too-small'
  | 'duplicate-aglycone-formula'
  | 'changelog-missing-version'
  | 'changelog-bad-date';

/** One problem in a rule file, with where it is. */
export interface RuleIssue {
  code: RuleIssueCode;
  severity: 'error' | 'warning';
  message: string;
  /** The file name the caller gave (for messages only; nothing is read). */
  file?: string;
  /** 1-based line and column in the text, when the problem has a place in it. */
  line?: number;
  column?: number;
  /** Where in the data: `residues[2].formula`; empty for the whole document. */
  path: string;
}

/** What loading a rule file gives: the validated rule set (only when there are no errors) and every issue. */
export interface RuleLoadResult {
  value: RuleSet | undefined;
  errors: RuleIssue[];
  warnings: RuleIssue[];
}

/** Options of {@link loadRuleSet}. */
export interface LoadRuleSetOptions {
  /** File name to put in issues. @defaultValue undefined */
  file?: string;
}

/** Upper bound of an element count that still makes sense for a glycoside or its aglycone. */
const SANE_ELEMENT_MAX = 300;

type Path = readonly (string | number)[];

/**
 * Loads a rule set from YAML or JSON text (JSON is read as YAML 1.2): parses it, validates it against
 * {@link RuleSetSchema}, then checks its chemistry and cross-references. Pure: the caller reads the file.
 */
export function loadRuleSet(text: string, options: LoadRuleSetOptions = {}): RuleLoadResult {
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, { lineCounter, prettyErrors: true, uniqueKeys: true });
  const issues: RuleIssue[] = [];
  const at = (offset: number | undefined): { line?: number; column?: number } => {
    if (offset === undefined) return {};
    const pos = lineCounter.linePos(offset);
    return { line: pos.line, column: pos.col };
  };
  const push = (
    severity: RuleIssue['severity'],
    code: RuleIssueCode,
    path: Path,
    message: string,
    target: 'value' | 'key' = 'value',
  ): void => {
    issues.push({
      code,
      severity,
      message,
      ...(options.file !== undefined ? { file: options.file } : {}),
      ...at(locate(doc.contents, path, target)),
      path: formatPath(path),
    });
  };

  for (const e of doc.errors) {
    issues.push({
      code: e.code === 'DUPLICATE_KEY' ? 'duplicate-key' : 'syntax',
      severity: 'error',
      message: firstLine(e.message),
      ...(options.file !== undefined ? { file: options.file } : {}),
      ...at(e.pos[0]),
      path: '',
    });
  }
  if (issues.length > 0) return split(issues, undefined);

  let data: unknown;
  try {
    // maxAliasCount guards against alias bombs ("billion laughs") in uploaded rule files.
    data = doc.toJS({ maxAliasCount: 1000 });
  } catch (err) {
    push('error', 'syntax', [], (err as Error).message);
    return split(issues, undefined);
  }
  if (data === null || typeof data !== 'object' || Array.isArray(data)) {
    push('error', 'not-a-mapping', [], 'a rule set is a mapping of keys (name, version, residues, …)');
    return split(issues, undefined);
  }

  checkUnknownKeys(RuleSetSchema, data, [], (path) =>
    push('error', 'unknown-key', path, `unknown key "${String(path[path.length - 1])}"`, 'key'),
  );

  const parsed = RuleSetSchema.safeParse(data);
  if (!parsed.success) {
    for (const issue of parsed.error.issues) {
      const path = issue.path.filter((p): p is string | number => typeof p !== 'symbol');
      const missing = issue.code === 'invalid_type' && valueAt(data, path) === undefined;
      if (missing)
        push('error', 'missing-field', path, `"${String(path[path.length - 1])}" is required here`);
      else push('error', zodCode(issue.code), path, issue.message);
    }
    return split(issues, undefined);
  }

  checkSemantics(parsed.data, push);
  const errors = issues.filter((i) => i.severity === 'error');
  return split(issues, errors.length === 0 ? parsed.data : undefined);
}

/** A one-line human rendering of an issue: `rules.yaml:12:5: error duplicate-name residues[2].name: …`. */
export function formatRuleIssue(issue: RuleIssue): string {
  const where = [issue.file ?? '<input>', issue.line, issue.column].filter((x) => x !== undefined).join(':');
  const path = issue.path ? ` ${issue.path}` : '';
  return `${where}: ${issue.severity} ${issue.code}${path}: ${issue.message}`;
}

function split(issues: RuleIssue[], value: RuleSet | undefined): RuleLoadResult {
  const byPlace = (a: RuleIssue, b: RuleIssue) =>
    (a.line ?? 0) - (b.line ?? 0) || (a.column ?? 0) - (b.column ?? 0);
  return {
    value,
    errors: issues.filter((i) => i.severity === 'error').sort(byPlace),
    warnings: issues.filter((i) => i.severity === 'warning').sort(byPlace),
  };
}

function firstLine(s: string): string {
  const i = s.indexOf('\n');
  return i < 0 ? s : s.slice(0, i);
}

function zodCode(code: string): RuleIssueCode {
  switch (code) {
    case 'invalid_type':
      return 'wrong-type';
    case 'too_small':
    case 'too_big':
      return 'out-of-range';
    case 'invalid_format':
      return 'invalid-format';
    case 'unrecognized_keys':
      return 'unknown-key';
    default:
      return 'invalid-value';
  }
}

/** `residues[2].formula`; keys that are not plain words are quoted: `elements.aglycone["1x"]`. */
export function formatPath(path: Path): string {
  let out = '';
  for (const seg of path) {
    if (typeof seg === 'number') out += `[${seg}]`;
    else if (/^[A-Za-z_][A-Za-z0-9_-]*$/.test(seg)) out += out ? `.${seg}` : seg;
    else out += `[${JSON.stringify(seg)}]`;
  }
  return out;
}

function valueAt(data: unknown, path: Path): unknown {
  let v: unknown = data;
  for (const seg of path) {
    if (v === null || typeof v !== 'object') return undefined;
    v = (v as Record<string | number, unknown>)[seg];
  }
  return v;
}

/**
 * Offset in the text of the node at `path` (or of its key), falling back to the deepest node that
 * exists: a missing field points at the mapping that lacks it.
 */
function locate(root: unknown, path: Path, target: 'value' | 'key'): number | undefined {
  let node = root as Node | null | undefined;
  let best = node?.range?.[0];
  for (let i = 0; i < path.length; i++) {
    const seg = path[i]!;
    const last = i === path.length - 1;
    if (isMap(node)) {
      const pair = node.items.find((p) => isScalar(p.key) && String(p.key.value) === String(seg));
      if (!pair) return best;
      const key = pair.key as Node;
      const value = pair.value as Node | null;
      if (last && target === 'key') return key.range?.[0] ?? best;
      node = value ?? key;
      best = node?.range?.[0] ?? key.range?.[0] ?? best;
      if (!value) return best;
    } else if (isSeq(node)) {
      const item = typeof seg === 'number' ? (node.items[seg] as Node | undefined) : undefined;
      if (!item) return best;
      node = item;
      best = item.range?.[0] ?? best;
    } else {
      return best;
    }
  }
  return best;
}

interface ZodDefLike {
  type: string;
  shape?: Record<string, z.ZodType>;
  element?: z.ZodType;
  innerType?: z.ZodType;
}

/** Reports keys the schema does not know (zod would silently drop them, and a typo would go unseen). */
function checkUnknownKeys(schema: z.ZodType, data: unknown, path: Path, report: (path: Path) => void): void {
  let def = (schema as unknown as { _zod: { def: ZodDefLike } })._zod.def;
  while (def.innerType && (def.type === 'default' || def.type === 'prefault' || def.type === 'optional')) {
    def = (def.innerType as unknown as { _zod: { def: ZodDefLike } })._zod.def;
  }
  if (
    def.type === 'object' &&
    def.shape &&
    data !== null &&
    typeof data === 'object' &&
    !Array.isArray(data)
  ) {
    for (const [key, value] of Object.entries(data)) {
      const sub = def.shape[key];
      if (!sub) report([...path, key]);
      else checkUnknownKeys(sub, value, [...path, key], report);
    }
  } else if (def.type === 'array' && def.element && Array.isArray(data)) {
    data.forEach((item, i) => {
      checkUnknownKeys(def.element!, item, [...path, i], report);
    });
  }
}

type Push = (
  severity: RuleIssue['severity'],
  code: RuleIssueCode,
  path: Path,
  message: string,
  target?: 'value' | 'key',
) => void;

type NamedSection = 'residues' | 'acyls' | 'smallLosses' | 'crossRing' | 'adductLosses' | 'aglycones';

/** Checks that zod cannot express: chemistry, uniqueness, cross-references, consistency. */
function checkSemantics(rules: RuleSet, push: Push): void {
  // 1. Every formula parses; losses are neutral; aglycones are neutral or a singly charged permanent cation.
  const formulas = new Map<string, Formula>();
  const readFormula = (section: NamedSection, i: number, text: string): Formula | undefined => {
    try {
      const f = parseFormula(text);
      formulas.set(`${section}[${i}]`, f);
      return f;
    } catch (err) {
      const code =
        err instanceof FormulaError && err.code === 'formula-unknown-element' ? err.code : 'formula-syntax';
      push('error', code, [section, i, 'formula'], (err as Error).message);
      return undefined;
    }
  };
  const lossSections = ['residues', 'acyls', 'smallLosses', 'crossRing', 'adductLosses'] as const;
  for (const section of lossSections) {
    rules[section].forEach((entry, i) => {
      const f = readFormula(section, i, entry.formula);
      if (!f) return;
      if (f.charge !== 0) {
        push(
          'error',
          'formula-charged',
          [section, i, 'formula'],
          `a neutral loss has no charge: "${entry.formula}"`,
        );
        return;
      }
      const radical = section === 'smallLosses' && rules.smallLosses[i]!.radical;
      const odd = !Number.isInteger(rdbe(f));
      if (odd && !radical) {
        push(
          'warning',
          'formula-odd-electron',
          [section, i, 'formula'],
          `${entry.formula} is a radical (half-integer RDBE); mark it radical: true if that is meant`,
        );
      } else if (!odd && radical) {
        push(
          'warning',
          'formula-odd-electron',
          [section, i, 'radical'],
          `${entry.formula} is marked radical but has an even number of electrons`,
        );
      }
    });
  }
  rules.aglycones.forEach((a, i) => {
    const f = readFormula('aglycones', i, a.formula);
    if (!f) return;
    if (f.charge !== 0 && f.charge !== 1) {
      push(
        'error',
        'formula-charged',
        ['aglycones', i, 'formula'],
        `an aglycone is neutral or a singly charged permanent cation (C15H11O6+), not "${a.formula}"`,
      );
      return;
    }
    // A neutral molecule has an integer RDBE; an even-electron cation (flavylium) a half-integer one.
    const half = !Number.isInteger(rdbe(f));
    if (half !== (f.charge === 1)) {
      push(
        'warning',
        'formula-odd-electron',
        ['aglycones', i, 'formula'],
        f.charge === 1
          ? `${a.formula} is a radical cation; a flavylium cation has a half-integer RDBE`
          : `${a.formula} has a half-integer RDBE: a radical, or a cation written without "+"`,
      );
    }
  });

  // 2. Names: unique within each section and across the losses (they label the tree's edges).
  const lossNames = new Map<string, string>();
  const lowerNames = new Map<string, string>();
  for (const section of ['residues', 'acyls', 'smallLosses', 'crossRing', 'adductLosses'] as const) {
    const local = new Map<string, number>();
    rules[section].forEach((entry, i) => {
      const here = `${section}[${i}]`;
      const seen = local.get(entry.name);
      if (seen !== undefined) {
        push(
          'error',
          'duplicate-name',
          [section, i, 'name'],
          `"${entry.name}" is already the name of ${section}[${seen}]`,
        );
        return;
      }
      local.set(entry.name, i);
      const other = lossNames.get(entry.name);
      if (other !== undefined) {
        push(
          'error',
          'duplicate-name',
          [section, i, 'name'],
          `"${entry.name}" is already the name of ${other}`,
        );
        return;
      }
      const similar = lowerNames.get(entry.name.toLowerCase());
      if (similar !== undefined) {
        push(
          'warning',
          'similar-name',
          [section, i, 'name'],
          `"${entry.name}" differs only in case from ${similar}`,
        );
      }
      lossNames.set(entry.name, here);
      lowerNames.set(entry.name.toLowerCase(), here);
    });
  }
  const aglyconeNames = new Map<string, number>();
  rules.aglycones.forEach((a, i) => {
    const seen = aglyconeNames.get(a.name.toLowerCase());
    if (seen !== undefined) {
      push(
        'error',
        'duplicate-name',
        ['aglycones', i, 'name'],
        `"${a.name}" is already the name of aglycones[${seen}]`,
      );
    } else aglyconeNames.set(a.name.toLowerCase(), i);
  });

  // 3. Cross-ring rules name an existing, C-linkable residue, and lose part of it.
  rules.crossRing.forEach((c, i) => {
    const r = rules.residues.findIndex((x) => x.name === c.residue);
    if (r < 0) {
      const names = rules.residues.map((x) => x.name).join(', ');
      push(
        'error',
        'unknown-residue',
        ['crossRing', i, 'residue'],
        `no residue "${c.residue}" (residues: ${names})`,
      );
      return;
    }
    const residue = rules.residues[r]!;
    if (!residue.linkages.includes('C')) {
      push(
        'warning',
        'cross-ring-not-c-linked',
        ['crossRing', i, 'residue'],
        `${c.residue} is not allowed a C linkage, so this cross-ring rule never applies`,
      );
    }
    const lost = formulas.get(`crossRing[${i}]`);
    const whole = formulas.get(`residues[${r}]`);
    if (lost && whole && !isSubformula(lost, whole)) {
      push(
        'error',
        'cross-ring-too-large',
        ['crossRing', i, 'formula'],
        `${c.formula} is not part of the residue ${residue.name} (${residue.formula})`,
      );
    }
  });

  // 4. Ion types: readable, known to the engine, on the right polarity list, listed once.
  const checkIonType = (name: string, path: Path): IonType | undefined => {
    const known = ionType(name);
    if (known) return known;
    try {
      const parsed = parseIonType(name);
      push(
        'warning',
        'ion-type-not-listed',
        path,
        `${name} is not one of the engine's standard ion types (${ION_TYPES.map((t) => t.name).join(', ')})`,
      );
      return parsed;
    } catch (err) {
      push('error', 'unknown-ion-type', path, (err as Error).message);
      return undefined;
    }
  };
  for (const polarity of ['positive', 'negative'] as const) {
    const seen = new Set<string>();
    rules.ionTypes[polarity].forEach((name, i) => {
      const path = ['ionTypes', polarity, i];
      const ion = checkIonType(name, path);
      if (!ion) return;
      if (seen.has(ion.name)) push('warning', 'duplicate-ion-type', path, `${name} is listed twice`);
      seen.add(ion.name);
      if (ion.polarity !== polarity) {
        push('error', 'ion-type-polarity', path, `${name} is a ${ion.polarity} ion, listed as ${polarity}`);
      }
    });
  }
  const allIonTypes = new Set(
    [...rules.ionTypes.positive, ...rules.ionTypes.negative].map((n) => ionType(n)?.name ?? n),
  );
  rules.adductLosses.forEach((a, i) => {
    const path = ['adductLosses', i, 'ionType'];
    const ion = checkIonType(a.ionType, path);
    if (ion && !allIonTypes.has(ion.name)) {
      push(
        'warning',
        'adduct-ion-type-unused',
        path,
        `${a.ionType} is in neither ionTypes list, so this rule never applies`,
      );
    }
  });

  // 5. Element ranges: known elements, min ≤ max, sane sizes, library inside, precursor large enough.
  const symbols = new Set<string>(ELEMENT_SYMBOLS);
  for (const which of ['aglycone', 'precursor'] as const) {
    for (const [el, [lo, hi]] of Object.entries(rules.elements[which])) {
      const path = ['elements', which, el];
      if (!symbols.has(el)) {
        push(
          'error',
          'unknown-element',
          path,
          `unknown element "${el}" (known: ${ELEMENT_SYMBOLS.join(' ')})`,
          'key',
        );
      } else if (lo > hi) {
        push(
          'error',
          'bad-element-range',
          path,
          `${el} range [${lo}, ${hi}] has its minimum above its maximum`,
        );
      } else if (hi > SANE_ELEMENT_MAX) {
        push(
          'warning',
          'element-range-large',
          path,
          `${el} up to ${hi} is far beyond any glycoside; searches get slow`,
        );
      }
    }
  }
  const range = (which: 'aglycone' | 'precursor', el: string): [number, number] =>
    (rules.elements[which][el] as [number, number] | undefined) ?? [0, 0];
  rules.aglycones.forEach((a, i) => {
    const f = formulas.get(`aglycones[${i}]`);
    if (!f) return;
    const outside = ELEMENT_SYMBOLS.filter((el, k) => {
      const n = f.counts[k]!;
      const [lo, hi] = range('aglycone', el);
      return n < lo || n > hi;
    });
    if (outside.length > 0) {
      push(
        'warning',
        'aglycone-outside-ranges',
        ['aglycones', i, 'formula'],
        `${a.name} (${a.formula}) lies outside elements.aglycone for ${outside.join(', ')}; ` +
          'an unknown aglycone like it would not be found by formula',
      );
    }
  });
  checkPrecursorRange(rules, formulas, range, push);

  // 6. Aglycones with the same formula cannot be told apart by mass: allowed, reported as ties.
  const byFormula = new Map<string, number[]>();
  rules.aglycones.forEach((_, i) => {
    const f = formulas.get(`aglycones[${i}]`);
    if (!f) return;
    const key = formatFormula(f);
    byFormula.set(key, [...(byFormula.get(key) ?? []), i]);
  });
  for (const [formula, idx] of byFormula) {
    if (idx.length < 2) continue;
    const names = idx.map((i) => rules.aglycones[i]!.name);
    push(
      'warning',
      'duplicate-aglycone-formula',
      ['aglycones', idx[1]!, 'formula'],
      `${names.join(', ')} share the formula ${formula}: they will be reported as ties`,
    );
  }

  // 7. The changelog describes the current version.
  if (!rules.changelog.some((c) => c.version === rules.version)) {
    push(
      'warning',
      'changelog-missing-version',
      ['version'],
      `the changelog has no entry for version ${rules.version}`,
    );
  }
  rules.changelog.forEach((c, i) => {
    if (!/^\d{4}-\d{2}-\d{2}$/.test(c.date)) {
      push(
        'warning',
        'changelog-bad-date',
        ['changelog', i, 'date'],
        `"${c.date}" is not an ISO date (YYYY-MM-DD)`,
      );
    }
  });
}

/** Warns when the precursor ranges cannot hold the largest aglycone with the most residues and acyl groups. */
function checkPrecursorRange(
  rules: RuleSet,
  formulas: Map<string, Formula>,
  range: (which: 'aglycone' | 'precursor', el: string) => [number, number],
  push: Push,
): void {
  const maxOf = (section: NamedSection, count: number, k: number): number => {
    let m = 0;
    rules[section].forEach((_, i) => {
      m = Math.max(m, formulas.get(`${section}[${i}]`)?.counts[k] ?? 0);
    });
    return m * count;
  };
  const short: string[] = [];
  ELEMENT_SYMBOLS.forEach((el, k) => {
    const agly = Math.max(range('aglycone', el)[1], maxOf('aglycones', 1, k));
    const need =
      agly + maxOf('residues', rules.limits.maxResidues, k) + maxOf('acyls', rules.limits.maxAcyls, k);
    const have = range('precursor', el)[1];
    if (need > have) short.push(`${el} needs ${need}, has ${have}`);
  });
  if (short.length > 0) {
    push(
      'warning',
      'precursor-range-too-small',
      ['elements', 'precursor'],
      `the largest candidate (limits.maxResidues residues, limits.maxAcyls acyl groups) does not fit: ${short.join('; ')}`,
    );
  }
}
