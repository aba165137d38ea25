import { createReadStream, createWriteStream, type WriteStream } from 'node:fs';
import { access, constants, rm, stat } from 'node:fs/promises';
import { basename, resolve } from 'node:path';
import type { Readable, Writable } from 'node:stream';
import { pathToFileURL } from 'node:url';
import type { RuleSetRef, SpectrumResult } from '../../engine/report/result.js';
import { formatRuleIssue } from '../../engine/rules/index.js';
import type { RuleSet } from '../../engine/rules/schema.js';
import { type CompiledRuleSet, compileRuleSet } from '../../engine/index.js';
import { type ScoreOptions, scoreSpectrum } from '../../engine/score/score-spectrum.js';
import { formatFromName, readSpectra } from '../../formats/detect.js';
import { peelVersion } from '../../formats/package-root.js';
import type { ReadIssue, ReadItem } from '../../formats/read-types.js';
import { RESULTS_FORMATS, type ResultsFormat, type ResultsWriter } from '../../formats/results-writer.js';
import { loadDefaultRuleSet, loadRuleSetFile, type RuleSetFile } from '../../formats/ruleset-file.js';
import { createResultsWriter } from '../../formats/write-results.js';
import { CandidatesLookup, formatCandidatesIssue, loadCandidatesFile } from '../candidates-file.js';
import { type CliIo, type Command, println, UsageError } from '../io.js';
import { createProgress, type ProgressCounts } from '../progress.js';

/** Usage text of `peel score`. */
export const SCORE_USAGE = `Usage: peel score FILE... [--ppm N] [--precursor-ppm N] [--rules PATH] [--candidates PATH]
                  [--format json|ndjson|csv|mztab] [--out PATH]

Scores every MS2 spectrum of the files (MGF, mzML, JSON/NDJSON; gzip-compressed too; "-" reads standard
input): builds its fragmentation tree with the rule set's neutral losses and ranks candidate structures
(aglycone + residues + acyl groups, and how they are stacked) by the intensity they explain.

Options:
  --ppm N             fragment m/z tolerance in ppm (default: the rule set's tolerances.fragmentPpm)
  --precursor-ppm N   precursor m/z tolerance in ppm (default: the rule set's tolerances.precursorPpm)
  --rules PATH        rule file (YAML or JSON) instead of the default rule set; check it with "peel rules check"
  --candidates PATH   extra candidate structures to score, for every spectrum or per spectrum id
                      (docs/candidates-file.md)
  --format F          json (default; the results document), ndjson (one result per line), csv (one row per
                      candidate), mztab (mzTab-M 2.0)
  --out PATH          write the results to PATH instead of standard output

Spectra that cannot be read become results with status "error"; the others are scored. Progress goes to
standard error (a live bar on a terminal, a one-line summary otherwise). Exit 0 when every file was read to
its end, 1 when a file, the rules or the candidates cannot be used, 2 for a usage mistake.

Results are putative identifications: MS/MS cannot tell glucose from galactose, identical formulas are
reported as ties, and confidence level 1 needs a reference standard.`;

/** The command line of `peel score`, parsed. */
export interface ScoreFlags {
  files: string[];
  ppm?: number;
  precursorPpm?: number;
  rules?: string;
  candidates?: string;
  format: ResultsFormat;
  out?: string;
}

function ppmValue(name: string, v: string): number {
  const ppm = Number(v);
  if (!/^\d*\.?\d+(?:[eE][+-]?\d+)?$/.test(v) || !Number.isFinite(ppm) || ppm <= 0 || ppm > 1000) {
    throw new UsageError(`${name} must be a number of ppm > 0 and ≤ 1000, got "${v}"`);
  }
  return ppm;
}

/** Parses the arguments of `peel score` (after the command word); throws {@link UsageError}. */
export function parseScoreFlags(argv: readonly string[]): ScoreFlags {
  const flags: ScoreFlags = { files: [], format: 'json' };
  const once = new Set<string>();
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i]!;
    if (arg === '--') {
      flags.files.push(...argv.slice(i + 1));
      break;
    }
    const eq = arg.startsWith('--') ? arg.indexOf('=') : -1;
    const name = eq > 0 ? arg.slice(0, eq) : arg;
    const value = (): string => {
      if (eq > 0) return arg.slice(eq + 1);
      const next = argv[i + 1];
      if (next === undefined || (next.startsWith('--') && next.length > 2)) {
        throw new UsageError(`${name} needs a value`);
      }
      i++;
      return next;
    };
    if (name.startsWith('--') && name !== '--') {
      if (once.has(name)) throw new UsageError(`${name} is given twice`);
      once.add(name);
    }
    switch (name) {
      case '--ppm':
        flags.ppm = ppmValue(name, value());
        break;
      case '--precursor-ppm':
        flags.precursorPpm = ppmValue(name, value());
        break;
      case '--rules':
        flags.rules = value();
        break;
      case '--candidates':
        flags.candidates = value();
        break;
      case '--out':
        flags.out = value();
        break;
      case '--format': {
        const v = value();
        if (!(RESULTS_FORMATS as readonly string[]).includes(v)) {
          throw new UsageError(`--format must be one of ${RESULTS_FORMATS.join(', ')}, got "${v}"`);
        }
        flags.format = v as ResultsFormat;
        break;
      }
      default:
        if (arg.startsWith('-') && arg !== '-')
          throw new UsageError(`unknown option ${arg}\n\n${SCORE_USAGE}`);
        flags.files.push(arg);
    }
  }
  if (flags.files.length === 0) throw new UsageError(`give at least one spectrum file\n\n${SCORE_USAGE}`);
  if (flags.files.filter((f) => f === '-').length > 1)
    throw new UsageError('standard input ("-") can be read once');
  return flags;
}

/** What {@link scoreFiles} counted. */
export interface ScoreSummary extends ProgressCounts {
  files: number;
  /** Reader warnings (the spectrum was still scored). */
  warnings: number;
  seconds: number;
}

/** Where and how {@link scoreFiles} reads, scores and writes. */
export interface ScoreFilesOptions {
  /** Spectrum files; `-` is `stdin`. */
  files: readonly string[];
  compiled: CompiledRuleSet;
  /** The rule set's reference (the caller passes it to `writer.begin`). */
  ruleset: RuleSetRef;
  writer: ResultsWriter;
  /** Tolerances (unset ones come from the rule set). */
  tolerances?: Pick<ScoreOptions, 'fragmentPpm' | 'precursorPpm'>;
  candidates?: CandidatesLookup;
  stdin?: Readable;
  /** Called when a file starts (0-based ordinal), e.g. to point mzTab-M rows at their run. */
  onFile?: (file: string, ordinal: number, size: number | undefined) => void;
  /** Called after every spectrum with the counts and the bytes read of the current file. */
  onProgress?: (counts: ProgressCounts, bytesRead: number | undefined) => void;
  /** Called for every reader issue (errors and warnings), with the result index. */
  onIssue?: (issue: ReadIssue, index: number) => void;
  /** Milliseconds clock. @defaultValue `performance.now` */
  now?: () => number;
}

/** The result that stands for a spectrum the reader could not read. */
export function readErrorResult(item: Extract<ReadItem, { kind: 'error' }>, index: number): SpectrumResult {
  const p = item.issue.position;
  const where = [
    p.file !== undefined ? basename(p.file) : undefined,
    p.line !== undefined && !item.issue.message.includes(`line ${p.line}`) ? `line ${p.line}` : undefined,
    p.path !== undefined && p.path !== '' ? p.path : undefined,
  ].filter((x) => x !== undefined);
  return {
    id: item.id ?? p.id ?? `index-${index}`,
    index,
    status: 'error',
    reason: {
      code: item.issue.code,
      message: where.length > 0 ? `${item.issue.message} (${where.join(', ')})` : item.issue.message,
    },
    candidates: [],
    cautions: [],
  };
}

/**
 * Streams every file through the reader, scores each spectrum in this process and hands each result to the
 * writer as soon as it exists: memory stays flat in the number of spectra. `begin` and `end` of the writer
 * are the caller's. A reader error item becomes an `error` result; a file that fails to stream (I/O error)
 * throws. Results come in file order and carry `index`, the 0-based position of the spectrum in its file
 * (as CSV's `spectrum_index` and mzTab-M's `index=N` references read it); with several files each result
 * also names its file in `metadata.file`.
 */
export async function scoreFiles(o: ScoreFilesOptions): Promise<ScoreSummary> {
  const now = o.now ?? (() => performance.now());
  const t0 = now();
  const counts: ProgressCounts = { done: 0, annotated: 0, unassigned: 0, errors: 0 };
  let warnings = 0;
  for (let f = 0; f < o.files.length; f++) {
    const file = o.files[f]!;
    let bytes: () => number | undefined = () => undefined;
    let items: AsyncGenerator<ReadItem>;
    if (file === '-') {
      if (!o.stdin) throw new UsageError('no standard input to read "-" from');
      o.onFile?.(file, f, undefined);
      items = readSpectra(o.stdin, { file: '<stdin>' });
    } else {
      const size = await stat(file).then(
        (s) => (s.isFile() ? s.size : undefined),
        () => undefined,
      );
      o.onFile?.(file, f, size);
      const stream = createReadStream(file, { highWaterMark: 256 * 1024 });
      bytes = () => stream.bytesRead;
      items = readSpectra(stream, { file });
    }
    const source = o.files.length > 1 ? { file: file === '-' ? '-' : basename(file) } : undefined;
    for await (const item of items) {
      // The reader's index: the 0-based position of the spectrum block in its file, good or bad.
      const index = item.index;
      let result: SpectrumResult;
      if (item.kind === 'error') {
        o.onIssue?.(item.issue, index);
        result = readErrorResult(item, index);
      } else {
        for (const w of item.warnings) o.onIssue?.(w, index);
        warnings += item.warnings.length;
        const candidates = o.candidates?.forSpectrum(item.spectrum.id);
        const scored = scoreSpectrum(item.spectrum, o.compiled, {
          ...o.tolerances,
          ...(candidates ? { candidates } : {}),
        });
        // `index` right after `id`, for readers of the JSON.
        const { id, ...rest } = scored;
        result = { id, index, ...rest };
      }
      if (source) result.metadata = { ...result.metadata, ...source };
      counts.done++;
      if (result.status === 'annotated') counts.annotated++;
      else if (result.status === 'unassigned') counts.unassigned++;
      else counts.errors++;
      await o.writer.write(result);
      o.onProgress?.(counts, bytes());
    }
  }
  return { ...counts, files: o.files.length, warnings, seconds: (now() - t0) / 1000 };
}

/** A usable rule set, or the lines explaining why not. */
async function loadRules(path: string | undefined, cwd: string): Promise<RuleSetFile> {
  return path === undefined ? loadDefaultRuleSet() : loadRuleSetFile(resolve(cwd, path));
}

/** Checks that each input can be opened for reading before any output is written. */
async function checkInputs(files: readonly string[], cwd: string): Promise<string | undefined> {
  for (const f of files) {
    if (f === '-') continue;
    const path = resolve(cwd, f);
    try {
      const s = await stat(path);
      if (s.isDirectory()) return `cannot read ${f}: it is a directory`;
      await access(path, constants.R_OK);
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code ?? 'EIO';
      const why = code === 'ENOENT' ? 'no such file' : code === 'EACCES' ? 'permission denied' : code;
      return `cannot open ${f}: ${why} (${code})`;
    }
  }
  return undefined;
}

/** Opens the output file and waits until it is open (so a bad path fails before scoring starts). */
function openOut(path: string): Promise<WriteStream> {
  return new Promise((resolveOpen, reject) => {
    const out = createWriteStream(path);
    out.once('error', reject);
    out.once('ready', () => {
      out.off('error', reject);
      resolveOpen(out);
    });
  });
}

function closeOut(out: Writable): Promise<void> {
  return new Promise((resolveClose, reject) => {
    out.once('error', reject);
    out.end(() => resolveClose());
  });
}

const fmt = (n: number) => Math.round(n).toLocaleString('en-US');

/** Reader problems listed on stderr before the summary (the rest are only counted). */
const SHOWN_ISSUES = 5;
/** Reader warnings listed on stderr (the spectrum was still scored; the summary counts them all). */
const SHOWN_WARNINGS = 3;

/**
 * `peel score FILE...`: scores every spectrum and writes the results (see {@link SCORE_USAGE}).
 */
export const scoreCommand: Command = async (argv: string[], io: CliIo) => {
  if (argv.includes('--help') || argv.includes('-h')) {
    println(io.stdout, SCORE_USAGE);
    return 0;
  }
  const flags = parseScoreFlags(argv);
  const files = flags.files.map((f) => (f === '-' ? f : resolve(io.cwd, f)));
  if (flags.files.includes('-') && !io.stdin) throw new UsageError('no standard input to read "-" from');
  const outPath = flags.out !== undefined && flags.out !== '-' ? resolve(io.cwd, flags.out) : undefined;
  if (outPath && files.includes(outPath)) {
    throw new UsageError(`--out ${flags.out} is also an input file; it would be overwritten`);
  }

  // Everything that can fail up front fails before a byte of output is written.
  const rulesFile = await loadRules(flags.rules, io.cwd);
  for (const issue of rulesFile.errors) println(io.stderr, formatRuleIssue(issue));
  if (!rulesFile.value || !rulesFile.ref) {
    println(
      io.stderr,
      `peel score: the rule set ${rulesFile.path} is not valid (${rulesFile.errors.length} error(s)); see "peel rules check"`,
    );
    return 1;
  }
  if (flags.rules !== undefined && rulesFile.warnings.length > 0) {
    println(
      io.stderr,
      `peel score: the rule set ${flags.rules} has ${rulesFile.warnings.length} warning(s); "peel rules check ${flags.rules}" lists them`,
    );
  }
  const rules: RuleSet = rulesFile.value;
  const ref = rulesFile.ref;

  let lookup: CandidatesLookup | undefined;
  if (flags.candidates !== undefined) {
    const loaded = await loadCandidatesFile(resolve(io.cwd, flags.candidates), {
      file: flags.candidates,
      rules,
    });
    for (const issue of [...loaded.errors, ...loaded.warnings])
      println(io.stderr, formatCandidatesIssue(issue));
    if (!loaded.value) {
      println(
        io.stderr,
        `peel score: the candidates file ${flags.candidates} has ${loaded.errors.length} error(s); see docs/candidates-file.md`,
      );
      return 1;
    }
    lookup = new CandidatesLookup(loaded.value);
  }

  const bad = await checkInputs(flags.files, io.cwd);
  if (bad) {
    println(io.stderr, `peel score: ${bad}`);
    return 1;
  }

  let out: Writable = io.stdout;
  // Only a regular file (or a new one) is removed when scoring fails: never /dev/null or a pipe.
  let removable = false;
  if (outPath) {
    removable = await stat(outPath).then(
      (s) => s.isFile(),
      () => true,
    );
    try {
      out = await openOut(outPath);
    } catch (err) {
      const code = (err as NodeJS.ErrnoException).code ?? 'EIO';
      println(io.stderr, `peel score: cannot write ${flags.out}: ${code}`);
      return 1;
    }
  }

  let run = 0;
  const writer = createResultsWriter(flags.format, out, {
    softwareVersion: peelVersion(),
    aglycones: rules.aglycones.map((a) => ({ name: a.name, formula: a.formula })),
    msRuns: files.map((f) =>
      f === '-'
        ? { name: 'standard input' }
        : { location: pathToFileURL(f).href, name: basename(f), ...formatOf(f) },
    ),
    msRunOf: () => run + 1,
  });
  const progress = createProgress({ stream: io.stderr, tty: io.isTty });
  const issues: string[] = [];
  const warningLines: string[] = [];
  let issueCount = 0;
  let summary: ScoreSummary | undefined;
  try {
    await writer.begin(ref);
    summary = await scoreFiles({
      files,
      compiled: compileRuleSet(rules),
      ruleset: ref,
      writer,
      tolerances: {
        ...(flags.ppm !== undefined ? { fragmentPpm: flags.ppm } : {}),
        ...(flags.precursorPpm !== undefined ? { precursorPpm: flags.precursorPpm } : {}),
      },
      ...(lookup ? { candidates: lookup } : {}),
      ...(io.stdin ? { stdin: io.stdin } : {}),
      onFile: (file, ordinal, size) => {
        run = ordinal;
        progress.file(file === '-' ? 'standard input' : basename(file), ordinal + 1, files.length, size);
      },
      onProgress: (counts, bytesRead) => progress.update(counts, bytesRead),
      onIssue: (issue, index) => {
        if (issue.severity === 'error') {
          issueCount++;
          if (issues.length < SHOWN_ISSUES) issues.push(formatReadIssue(issue, index));
        } else if (warningLines.length < SHOWN_WARNINGS) warningLines.push(formatReadIssue(issue, index));
      },
    });
    await writer.end();
    if (outPath) await closeOut(out);
  } catch (err) {
    progress.clear();
    await writer.abort().catch(() => {});
    if (outPath) {
      out.destroy();
      if (removable) await rm(outPath, { force: true }).catch(() => {});
    }
    const e = err as NodeJS.ErrnoException;
    if (e?.code === 'usage') throw err;
    const what =
      e?.code === 'EPIPE'
        ? 'the output was closed early (EPIPE)'
        : e?.code
          ? `${e.code}: ${e.message}`
          : String((err as Error)?.message ?? err);
    println(
      io.stderr,
      `peel score: stopped, ${what}${outPath && removable ? `; ${flags.out} was removed` : ''}`,
    );
    return 1;
  }
  progress.clear();
  for (const line of warningLines) println(io.stderr, line);
  for (const line of issues) println(io.stderr, line);
  if (issueCount > issues.length)
    println(io.stderr, `… and ${fmt(issueCount - issues.length)} more unreadable spectra`);
  const unmatched = lookup?.unmatched() ?? [];
  if (unmatched.length > 0) {
    const shown = unmatched.slice(0, 5).join(', ');
    println(
      io.stderr,
      `peel score: warning: ${unmatched.length} spectrum id(s) of the candidates file matched no spectrum: ${shown}${unmatched.length > 5 ? ', …' : ''}`,
    );
  }
  const s = summary;
  const rate = s.done / Math.max(s.seconds, 1e-3);
  const warn = s.warnings > 0 ? `, ${fmt(s.warnings)} reader warning(s)` : '';
  println(
    io.stderr,
    `peel score: ${fmt(s.done)} ${s.done === 1 ? 'spectrum' : 'spectra'} from ${s.files} file${s.files === 1 ? '' : 's'} in ${s.seconds.toFixed(1)} s ` +
      `(${fmt(rate)}/s): ${fmt(s.annotated)} annotated, ${fmt(s.unassigned)} unassigned, ${fmt(s.errors)} error${s.errors === 1 ? '' : 's'}${warn}; ` +
      `rule set ${ref.name} ${ref.version}; ${flags.format}${outPath ? ` written to ${flags.out}` : ' on standard output'}`,
  );
  return 0;
};

function formatOf(path: string): { format?: 'mgf' | 'mzml' | 'json' } {
  const f = formatFromName(path);
  return f ? { format: f } : {};
}

function formatReadIssue(issue: ReadIssue, index: number): string {
  const p = issue.position;
  const where = [p.file !== undefined ? basename(p.file) : '<input>', p.line]
    .filter((x) => x !== undefined)
    .join(':');
  const id = p.id !== undefined ? ` spectrum ${p.id}` : '';
  return `${where}: ${issue.severity} ${issue.code} (result ${index}${id}): ${issue.message}`;
}
