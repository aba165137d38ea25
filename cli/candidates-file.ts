/**
 * The candidates file of `peel score --candidates FILE` (docs/candidates-file.md): structures a chemist
 * wants scored beside those Peel enumerates, for every spectrum of a run or for named spectra.
 *
 * Two spellings of the same content:
 * - YAML or JSON: `{ all: [STRUCTURE…], spectra: { ID: [STRUCTURE…] } }`, each STRUCTURE a string or
 *   `{ structure, name }`;
 * - TSV: `spectrum_id<TAB>structure[<TAB>name]` per line, `*` as the id for every spectrum.
 *
 * Structures are in Peel's stacking notation (`cyanidin[Hex[Pen]]`, `<C16H12O6>[Hex]`, `apigenin[C-Hex]`).
 * Their syntax, and their names against the rule set, are checked here so that a typo is an error with a
 * line and column before anything is scored, never a candidate that silently matches nothing.
 */
import { readFile } from 'node:fs/promises';
import { isMap, isPair, isScalar, isSeq, LineCounter, type Node, parseDocument } from 'yaml';
import { z } from 'zod';
import { parseFormula } from '../engine/chem/formula.js';
import type { RuleSet } from '../engine/rules/schema.js';
import type { UserCandidate } from '../engine/score/score-spectrum.js';

/** Codes of the problems a candidates file can have (classify by these, not by message text). */
export type CandidatesIssueCode =
  | 'unreadable'
  | 'too-large'
  | 'syntax'
  | 'duplicate-key'
  | 'not-a-mapping'
  | 'unknown-key'
  | 'invalid-entry'
  | 'columns'
  | 'structure-syntax'
  | 'bad-formula'
  | 'unknown-aglycone'
  | 'unknown-residue'
  | 'not-c-linkable'
  | 'acyl-carries'
  | 'duplicate-structure'
  | 'empty';

/** One problem in a candidates file, with where it is (1-based line and column). */
export interface CandidatesIssue {
  code: CandidatesIssueCode;
  severity: 'error' | 'warning';
  message: string;
  file?: string;
  line?: number;
  column?: number;
  /** Where in the data: `all[2]`, `spectra.S0001[0].structure`; the spectrum id for TSV lines. */
  path?: string;
}

/** The validated content: candidates for every spectrum, and per spectrum id. */
export interface CandidatesFile {
  all: UserCandidate[];
  spectra: Map<string, UserCandidate[]>;
}

/** What loading gives: the content only when there are no errors, and every issue. */
export interface CandidatesLoadResult {
  value: CandidatesFile | undefined;
  errors: CandidatesIssue[];
  warnings: CandidatesIssue[];
}

/** The two spellings of a candidates file. */
export type CandidatesSyntax = 'yaml' | 'tsv';

/** Options of {@link parseCandidates}. */
export interface ParseCandidatesOptions {
  /** File name put in issues. */
  file?: string;
  /** @defaultValue from the file name's extension, else from the content (a TAB on the first entry line) */
  syntax?: CandidatesSyntax;
  /** The rule set the names must come from; without it only the syntax is checked. */
  rules?: Pick<RuleSet, 'residues' | 'acyls' | 'aglycones'>;
}

/** Largest candidates file read (it is held in memory whole). */
export const MAX_CANDIDATES_FILE_BYTES = 64 * 2 ** 20;
const MAX_STRUCTURE = 500;
const MAX_NAME = 200;

/** One entry: a structure string, or a structure with a display name. */
const EntrySchema = z.union([
  z.string().trim().min(1, 'a structure may not be empty').max(MAX_STRUCTURE),
  z.strictObject({
    structure: z.string().trim().min(1, 'a structure may not be empty').max(MAX_STRUCTURE),
    name: z.string().trim().min(1).max(MAX_NAME).optional(),
  }),
]);
const EntriesSchema = z.union([EntrySchema, z.array(EntrySchema)]);

/** The YAML/JSON spelling. */
export const CandidatesDocumentSchema = z.strictObject({
  /** Format version of the file (only 1 exists). */
  version: z.literal(1).optional(),
  /** Candidates scored for every spectrum. */
  all: EntriesSchema.optional(),
  /** Candidates scored for the spectrum with that id (MGF TITLE, mzML spectrum id, JSON id). */
  spectra: z.record(z.string().min(1).max(256), EntriesSchema).optional(),
});

/** One TSV line after splitting. */
export const CandidatesRowSchema = z.object({
  spectrum: z.string().min(1, 'the spectrum id is empty (use * for every spectrum)').max(256),
  structure: z.string().min(1, 'the structure is empty').max(MAX_STRUCTURE),
  name: z.string().min(1).max(MAX_NAME).optional(),
});

/** A problem inside one structure string, at a 0-based offset in it. */
export interface StructureProblem {
  code: Extract<
    CandidatesIssueCode,
    | 'structure-syntax'
    | 'bad-formula'
    | 'unknown-aglycone'
    | 'unknown-residue'
    | 'not-c-linkable'
    | 'acyl-carries'
  >;
  offset: number;
  message: string;
}

/** Names a structure may use, from a rule set (see {@link structureNames}). */
export interface KnownNames {
  aglycones: Set<string>;
  residues: Map<string, { cLinked: boolean }>;
  acyls: Set<string>;
  lower: Map<string, string>;
}

/** The names of a rule set that structures may use. */
export function structureNames(rules: ParseCandidatesOptions['rules']): KnownNames | undefined {
  if (!rules) return undefined;
  const k: KnownNames = {
    aglycones: new Set(rules.aglycones.map((a) => a.name)),
    residues: new Map(rules.residues.map((r) => [r.name, { cLinked: (r.linkages ?? ['O']).includes('C') }])),
    acyls: new Set(rules.acyls.map((a) => a.name)),
    lower: new Map(),
  };
  for (const n of [...k.aglycones, ...k.residues.keys(), ...k.acyls]) k.lower.set(n.toLowerCase(), n);
  return k;
}

const NAME_CHARS = /^[A-Za-z0-9(][A-Za-z0-9,'′″\-_ ()]*$/;

/**
 * Checks one structure in the stacking notation (docs/stacking-notation.md): `AGLYCONE` or a neutral
 * `<FORMULA>`, then groups `[UNIT …]` where a UNIT is a residue (optionally `C-` for a C-glycosidic bond to the
 * aglycone, or `O-`) or an acyl group; a residue may carry groups (`Hex[Pen]`, `Hex[malonyl]`), an acyl group
 * none. With `names`, every name must be one of the rule set's.
 */
export function checkStructure(text: string, names?: KnownNames): StructureProblem[] {
  const problems: StructureProblem[] = [];
  const problem = (code: StructureProblem['code'], offset: number, message: string) => {
    problems.push({ code, offset, message });
  };
  let i = 0;
  const suggest = (name: string) => {
    const hit = names?.lower.get(name.toLowerCase());
    return hit && hit !== name ? ` (did you mean "${hit}"?)` : '';
  };

  // The aglycone: a formula in angle brackets, or a library name up to the first "[".
  if (text.startsWith('<')) {
    const close = text.indexOf('>');
    if (close < 0) {
      problem('structure-syntax', 0, 'an aglycone formula opened with "<" is never closed with ">"');
      return problems;
    }
    const formula = text.slice(1, close);
    try {
      const f = parseFormula(formula);
      if (f.charge !== 0) {
        problem('bad-formula', 1, `give the aglycone's neutral formula, without a charge (not ${formula})`);
      }
    } catch (err) {
      problem('bad-formula', 1, `"${formula}" is not a formula: ${(err as Error).message}`);
    }
    i = close + 1;
  } else {
    const end = text.indexOf('[') < 0 ? text.length : text.indexOf('[');
    const name = text.slice(0, end).trim();
    if (name.length === 0) {
      problem('structure-syntax', 0, 'a structure starts with an aglycone name or <FORMULA>');
    } else if (text.slice(0, end).includes(']')) {
      problem('structure-syntax', text.indexOf(']'), 'a "]" without its "["');
    } else if (!NAME_CHARS.test(name)) {
      problem(
        'structure-syntax',
        0,
        `"${name}" is not an aglycone name (letters, digits, spaces and , ' - _ ( ))`,
      );
    } else if (names && !names.aglycones.has(name)) {
      problem(
        'unknown-aglycone',
        0,
        `"${name}" is not in the rule set's aglycone library${suggest(name)}; give an unknown aglycone as <FORMULA>`,
      );
    }
    i = end;
  }

  // Groups: a tiny recursive descent over "[" UNIT GROUP* "]".
  const group = (depth: number): boolean => {
    const open = i;
    i++; // "["
    let j = i;
    while (j < text.length && text[j] !== '[' && text[j] !== ']') j++;
    const raw = text.slice(i, j);
    const unit = raw.trim();
    const at = i + (raw.length - raw.trimStart().length);
    let acyl = false;
    if (unit.length === 0) {
      problem('structure-syntax', i, 'empty brackets: a residue or acyl group name goes inside');
    } else {
      const prefix = /^[CO]-/.test(unit) ? unit[0] : undefined;
      const name = prefix ? unit.slice(2) : unit;
      const cLinked = prefix === 'C';
      const onSugar = 'only a residue bound to the aglycone can be C-linked, not one on a sugar';
      if (!NAME_CHARS.test(name)) {
        problem('structure-syntax', at, `"${unit}" is not a residue or acyl group name`);
      } else if (names) {
        const residue = names.residues.get(name);
        if (residue) {
          if (cLinked && !residue.cLinked) {
            problem('not-c-linkable', at, `the rule set does not allow ${name} as a C-glycoside`);
          } else if (cLinked && depth > 0) {
            problem('not-c-linkable', at, onSugar);
          }
        } else if (names.acyls.has(name)) {
          acyl = true;
          if (prefix)
            problem('not-c-linkable', at, `${name} is an acyl group (an ester): no C- or O- before it`);
        } else {
          problem(
            'unknown-residue',
            at,
            `"${name}" is neither a residue nor an acyl group of the rule set${suggest(name)}`,
          );
        }
      } else if (cLinked && depth > 0) {
        problem('not-c-linkable', at, onSugar);
      }
    }
    i = j;
    if (acyl && text[i] === '[') {
      problem(
        'acyl-carries',
        i,
        'an acyl group carries nothing: put the unit on a sugar or the aglycone instead',
      );
    }
    while (i < text.length && text[i] === '[') {
      if (depth > 20) {
        problem('structure-syntax', i, 'groups nested more than 20 deep');
        return false;
      }
      if (!group(depth + 1)) return false;
    }
    if (text[i] !== ']') {
      problem('structure-syntax', open, 'this "[" is never closed');
      return false;
    }
    i++;
    return true;
  };

  while (i < text.length) {
    if (text[i] === '[') {
      if (!group(0)) break;
    } else if (/\s/.test(text[i]!)) {
      i++;
    } else {
      problem(
        'structure-syntax',
        i,
        text[i] === ']' ? 'a "]" without its "["' : `unexpected "${text[i]}": each residue goes in brackets`,
      );
      break;
    }
  }
  return problems;
}

function syntaxOf(text: string, file: string | undefined): CandidatesSyntax {
  if (file && /\.(tsv|tab|txt)$/i.test(file)) return 'tsv';
  if (file && /\.(ya?ml|json)$/i.test(file)) return 'yaml';
  for (const line of text.split(/\r?\n/)) {
    const t = line.trim();
    if (t === '' || t.startsWith('#')) continue;
    return line.includes('\t') ? 'tsv' : 'yaml';
  }
  return 'yaml';
}

/** Builds issues, merging per-spectrum lists and dropping repeated structures. */
class Collector {
  readonly issues: CandidatesIssue[] = [];
  readonly all: UserCandidate[] = [];
  readonly spectra = new Map<string, UserCandidate[]>();
  private readonly seen = new Map<string, Set<string>>();

  constructor(
    private readonly file: string | undefined,
    private readonly names: KnownNames | undefined,
  ) {}

  issue(
    severity: CandidatesIssue['severity'],
    code: CandidatesIssueCode,
    message: string,
    where: { line?: number; column?: number; path?: string } = {},
  ): void {
    this.issues.push({
      code,
      severity,
      message,
      ...(this.file !== undefined ? { file: this.file } : {}),
      ...(where.line !== undefined ? { line: where.line } : {}),
      ...(where.column !== undefined ? { column: where.column } : {}),
      ...(where.path !== undefined ? { path: where.path } : {}),
    });
  }

  /** Adds one candidate (id `*` = every spectrum); `at` places a 0-based offset of the structure text. */
  add(
    id: string,
    candidate: UserCandidate,
    path: string,
    at: (offset: number) => { line?: number; column?: number },
  ): void {
    const problems = checkStructure(candidate.structure, this.names);
    for (const p of problems) this.issue('error', p.code, p.message, { ...at(p.offset), path });
    if (problems.length > 0) return;
    let seen = this.seen.get(id);
    if (!seen) {
      seen = new Set();
      this.seen.set(id, seen);
    }
    if (seen.has(candidate.structure)) {
      this.issue(
        'warning',
        'duplicate-structure',
        `${candidate.structure} is listed twice for ${id === '*' ? 'every spectrum' : `spectrum ${id}`}; kept once`,
        { ...at(0), path },
      );
      return;
    }
    seen.add(candidate.structure);
    if (id === '*') this.all.push(candidate);
    else {
      const list = this.spectra.get(id);
      if (list) list.push(candidate);
      else this.spectra.set(id, [candidate]);
    }
  }

  result(): CandidatesLoadResult {
    const byPlace = (a: CandidatesIssue, b: CandidatesIssue) =>
      (a.line ?? 0) - (b.line ?? 0) || (a.column ?? 0) - (b.column ?? 0);
    const errors = this.issues.filter((i) => i.severity === 'error').sort(byPlace);
    const warnings = this.issues.filter((i) => i.severity === 'warning').sort(byPlace);
    if (errors.length === 0 && this.all.length === 0 && this.spectra.size === 0) {
      warnings.push({
        code: 'empty',
        severity: 'warning',
        message: 'the file lists no candidates',
        ...(this.file !== undefined ? { file: this.file } : {}),
      });
    }
    return {
      value: errors.length === 0 ? { all: this.all, spectra: this.spectra } : undefined,
      errors,
      warnings,
    };
  }
}

function parseTsv(text: string, c: Collector): void {
  const lines = text.split(/\r?\n/);
  let first = true;
  lines.forEach((line, n) => {
    const lineNo = n + 1;
    if (line.trim() === '' || line.trimStart().startsWith('#')) return;
    const cells = line.split('\t');
    if (first) {
      first = false;
      if (cells[0]!.trim().toLowerCase() === 'spectrum_id' && cells[1]?.trim().toLowerCase() === 'structure')
        return;
    }
    if (cells.length < 2 || cells.length > 3) {
      c.issue(
        'error',
        'columns',
        `${cells.length} column(s); a line is spectrum_id<TAB>structure or spectrum_id<TAB>structure<TAB>name`,
        { line: lineNo, column: 1 },
      );
      return;
    }
    const row = CandidatesRowSchema.safeParse({
      spectrum: cells[0]!.trim(),
      structure: cells[1]!.trim(),
      ...(cells[2] !== undefined && cells[2].trim() !== '' ? { name: cells[2].trim() } : {}),
    });
    const columnOf = (k: number) => 1 + cells.slice(0, k).reduce((s, x) => s + x.length + 1, 0);
    if (!row.success) {
      for (const issue of row.error.issues) {
        const k = ['spectrum', 'structure', 'name'].indexOf(String(issue.path[0]));
        c.issue('error', 'invalid-entry', issue.message, { line: lineNo, column: columnOf(Math.max(0, k)) });
      }
      return;
    }
    const lead = cells[1]!.length - cells[1]!.trimStart().length;
    const structureColumn = columnOf(1) + lead;
    const { spectrum, structure, name } = row.data;
    c.add(spectrum, name ? { structure, name } : { structure }, spectrum, (offset) => ({
      line: lineNo,
      column: structureColumn + offset,
    }));
  });
}

function parseYaml(text: string, c: Collector): void {
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, { lineCounter, prettyErrors: true, uniqueKeys: true });
  const pos = (offset: number | undefined) => {
    if (offset === undefined) return {};
    const p = lineCounter.linePos(offset);
    return { line: p.line, column: p.col };
  };
  for (const e of doc.errors) {
    let message = e.message.split('\n')[0]!;
    // Brackets of the stacking notation end a YAML flow list: `[cyanidin[Hex]]` must be `["cyanidin[Hex]"]`.
    if (/flow/i.test(message))
      message += ' (inside [ ] or { } write each structure in quotes: ["cyanidin[Hex]"])';
    c.issue('error', e.code === 'DUPLICATE_KEY' ? 'duplicate-key' : 'syntax', message, pos(e.pos[0]));
  }
  if (doc.errors.length > 0) return;
  let data: unknown;
  try {
    data = doc.toJS({ maxAliasCount: 1000 });
  } catch (err) {
    c.issue('error', 'syntax', (err as Error).message);
    return;
  }
  if (data === null || data === undefined) return;
  if (typeof data !== 'object' || Array.isArray(data)) {
    c.issue('error', 'not-a-mapping', 'a candidates file is a mapping with "all" and/or "spectra"', pos(0));
    return;
  }
  const parsed = CandidatesDocumentSchema.safeParse(data);
  if (!parsed.success) {
    for (const issue of parsed.error.issues) {
      const path = issue.path.filter((p): p is string | number => typeof p !== 'symbol');
      if (issue.code === 'unrecognized_keys') {
        for (const key of issue.keys) {
          c.issue(
            'error',
            'unknown-key',
            `unknown key "${key}" (known: version, all, spectra; an entry: structure, name)`,
            {
              ...pos(locate(doc.contents, [...path, key], true)),
              path: formatPath([...path, key]),
            },
          );
        }
      } else {
        const message =
          issue.code === 'invalid_union'
            ? 'expected a structure string, a list of them, or { structure, name }'
            : issue.message;
        c.issue('error', 'invalid-entry', message, {
          ...pos(locate(doc.contents, path, false)),
          path: formatPath(path),
        });
      }
    }
    return;
  }
  // Places a 0-based offset inside a structure scalar (exact for one-line plain and quoted scalars).
  const inScalar = (path: (string | number)[]) => {
    const node = doc.getIn(path, true) as Node | undefined;
    const start = node?.range?.[0];
    const quoted = isScalar(node) && (node.type === 'QUOTE_DOUBLE' || node.type === 'QUOTE_SINGLE') ? 1 : 0;
    return (offset: number) => pos(start === undefined ? undefined : start + quoted + offset);
  };
  const addAll = (id: string, entries: z.infer<typeof EntriesSchema>, base: (string | number)[]) => {
    const list = Array.isArray(entries) ? entries : [entries];
    list.forEach((e, k) => {
      const at = Array.isArray(entries) ? [...base, k] : base;
      if (typeof e === 'string') c.add(id, { structure: e }, formatPath(at), inScalar(at));
      else {
        const p = [...at, 'structure'];
        c.add(
          id,
          e.name ? { structure: e.structure, name: e.name } : { structure: e.structure },
          formatPath(p),
          inScalar(p),
        );
      }
    });
  };
  if (parsed.data.all) addAll('*', parsed.data.all, ['all']);
  for (const [id, entries] of Object.entries(parsed.data.spectra ?? {})) addAll(id, entries, ['spectra', id]);
}

/** The source offset of the node at `path` (or of its key), else of the nearest parent that exists. */
function locate(root: unknown, path: readonly (string | number)[], key: boolean): number | undefined {
  let node = root as Node | undefined;
  let best = node?.range?.[0];
  for (let k = 0; k < path.length; k++) {
    const step = path[k]!;
    if (isMap(node)) {
      const pair = node.items.find(
        (p) => isPair(p) && isScalar(p.key) && String(p.key.value) === String(step),
      );
      if (!pair) return best;
      const keyNode = pair.key as Node;
      if (k === path.length - 1 && key) return keyNode.range?.[0] ?? best;
      node = pair.value as Node | undefined;
      best = node?.range?.[0] ?? keyNode.range?.[0] ?? best;
    } else if (isSeq(node) && typeof step === 'number') {
      node = node.items[step] as Node | undefined;
      best = node?.range?.[0] ?? best;
    } else return best;
  }
  return best;
}

function formatPath(path: readonly (string | number)[]): string {
  let s = '';
  for (const p of path) {
    if (typeof p === 'number') s += `[${p}]`;
    else if (/^[A-Za-z_][A-Za-z0-9_-]*$/.test(p)) s += s ? `.${p}` : p;
    else s += `[${JSON.stringify(p)}]`;
  }
  return s;
}

/**
 * Parses and validates a candidates file's text (YAML/JSON or TSV). Pure: the caller reads the file.
 * Never throws for bad content; every problem is an issue with its line and column.
 */
export function parseCandidates(text: string, options: ParseCandidatesOptions = {}): CandidatesLoadResult {
  const c = new Collector(options.file, structureNames(options.rules));
  const body = text.replace(/^\uFEFF/, '');
  if ((options.syntax ?? syntaxOf(body, options.file)) === 'tsv') parseTsv(body, c);
  else parseYaml(body, c);
  return c.result();
}

/** Reads and validates a candidates file; a file that cannot be read is one `unreadable` error. */
export async function loadCandidatesFile(
  path: string,
  options: Omit<ParseCandidatesOptions, 'file'> & { file?: string } = {},
): Promise<CandidatesLoadResult> {
  const file = options.file ?? path;
  let buf: Buffer;
  try {
    buf = await readFile(path);
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code ?? 'EIO';
    return {
      value: undefined,
      errors: [{ code: 'unreadable', severity: 'error', message: `cannot read ${path} (${code})`, file }],
      warnings: [],
    };
  }
  if (buf.length > MAX_CANDIDATES_FILE_BYTES) {
    return {
      value: undefined,
      errors: [
        {
          code: 'too-large',
          severity: 'error',
          message: `${path} is ${(buf.length / 2 ** 20).toFixed(0)} MiB; a candidates file may hold at most ${MAX_CANDIDATES_FILE_BYTES / 2 ** 20} MiB`,
          file,
        },
      ],
      warnings: [],
    };
  }
  return parseCandidates(buf.toString('utf8'), { ...options, file });
}

/** One issue as a line: `file:line:column: error code path: message`. */
export function formatCandidatesIssue(issue: CandidatesIssue): string {
  const where = [issue.file ?? '<candidates>', issue.line, issue.column]
    .filter((x) => x !== undefined)
    .join(':');
  return `${where}: ${issue.severity} ${issue.code}${issue.path ? ` ${issue.path}` : ''}: ${issue.message}`;
}

/**
 * Hands out the candidates of each spectrum (those for every spectrum first, then its own) and remembers
 * which ids were asked for, so that ids matching no spectrum can be reported.
 */
export class CandidatesLookup {
  private readonly used = new Set<string>();
  constructor(private readonly file: CandidatesFile) {}

  /** The candidates of a spectrum, or undefined when there are none. */
  forSpectrum(id: string): readonly UserCandidate[] | undefined {
    const own = this.file.spectra.get(id);
    if (own) this.used.add(id);
    if (!own) return this.file.all.length > 0 ? this.file.all : undefined;
    if (this.file.all.length === 0) return own;
    const seen = new Set(this.file.all.map((x) => x.structure));
    return [...this.file.all, ...own.filter((x) => !seen.has(x.structure))];
  }

  /** Spectrum ids of the file that no scored spectrum had. */
  unmatched(): string[] {
    return [...this.file.spectra.keys()].filter((id) => !this.used.has(id));
  }
}
