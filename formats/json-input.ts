import { StringDecoder } from 'node:string_decoder';
import { type Spectrum, SpectrumSchema } from '../engine/spectrum/spectrum.js';
import { peaksSorted, sortPeaks } from './peaks.js';
import type { ReadIssue, ReadIssueCode, ReadItem, ReadOptions } from './read-types.js';
import { LineSplitter, MAX_LINE_LENGTH, type ReadSource, sourceChunks } from './source.js';

/** Options of {@link readJsonSpectra}. */
export interface JsonReadOptions extends ReadOptions {
  /**
   * Largest whole JSON document (array or `{ "spectra": [...] }`) read, in characters; NDJSON has no such limit.
   * @defaultValue 256 MiB
   */
  maxDocumentLength?: number;
  /**
   * Longest NDJSON line (one spectrum).
   * @defaultValue 1 MiB
   */
  maxLineLength?: number;
}

const DEFAULT_MAX_DOCUMENT = 256 * 2 ** 20;
/** The spectrum schema's largest peak list. */
const MAX_PEAKS = 200000;
const SPECTRUM_KEYS = new Set(['id', 'precursor', 'polarity', 'rt', 'peaks', 'isotopes', 'metadata']);
const PRECURSOR_KEYS = new Set(['mz', 'charge', 'intensity']);

type SpectrumItem = Extract<ReadItem, { kind: 'spectrum' }>;

/**
 * Reads spectra given as JSON, each checked with {@link SpectrumSchema} (the same schema the HTTP API uses).
 *
 * Accepts an array of spectra, `{ "spectra": [...] }`, a single spectrum object, or NDJSON (one spectrum per
 * line). NDJSON is streamed line by line; a whole JSON document (array or object spread over several lines)
 * is parsed whole once it has arrived, up to `maxDocumentLength` — send NDJSON for large inputs.
 * The two are told apart by the first line: NDJSON when it is a complete JSON object.
 *
 * One invalid spectrum yields one error item whose position has a JSON pointer to the first problem
 * (`/spectra/3/peaks/0/1`) and, for NDJSON, the line; the others go on. Codes match the text readers where
 * the problem is the same (`missing-precursor`, `bad-precursor`, `bad-charge`, `bad-peak`), else
 * `invalid-spectrum`; malformed JSON is `syntax`. Keys the schema does not know are dropped with an
 * `unknown-key` warning; unsorted peaks are sorted (warning); an empty peak list gets a `no-peaks` warning.
 */
export async function* readJsonSpectra(
  source: ReadSource,
  options: JsonReadOptions = {},
): AsyncGenerator<ReadItem> {
  const file = options.file;
  const maxDoc = options.maxDocumentLength ?? DEFAULT_MAX_DOCUMENT;
  const maxLine = options.maxLineLength ?? MAX_LINE_LENGTH;
  const it = sourceChunks(source)[Symbol.asyncIterator]();
  const decoder = new StringDecoder('utf8');
  const decode = (c: Buffer | string) => (typeof c === 'string' ? c : decoder.write(c));

  // Read until the first line is complete (or the document ends) to choose between NDJSON and a document.
  let head = '';
  let done = false;
  while (!done) {
    const r = await it.next();
    if (r.done) {
      head += decoder.end();
      done = true;
      break;
    }
    head += decode(r.value);
    const firstChar = head.trimStart()[0];
    if (firstChar === '[') break;
    if (firstChar !== undefined && head.includes('\n', head.length - head.trimStart().length)) break;
    if (head.length > maxLine) break;
  }
  if (head.charCodeAt(0) === 0xfeff) head = head.slice(1);
  const trimmed = head.trimStart();
  const nl = trimmed.indexOf('\n');
  const firstLine = (nl < 0 ? trimmed : trimmed.slice(0, nl)).trim();
  let ndjson = false;
  if (trimmed[0] === '{' && (nl >= 0 || done)) {
    try {
      JSON.parse(firstLine);
      ndjson = true;
    } catch {
      ndjson = false;
    }
  }

  if (ndjson) {
    const rest = async function* () {
      yield head;
      if (done) return;
      for (;;) {
        const r = await it.next();
        if (r.done) break;
        yield decode(r.value);
      }
      yield decoder.end();
    };
    yield* readNdjson(rest(), file, maxLine);
    return;
  }

  // A whole document: collect it, then parse it once.
  let text = head;
  while (!done) {
    const r = await it.next();
    if (r.done) {
      text += decoder.end();
      break;
    }
    text += decode(r.value);
    if (text.length > maxDoc) {
      await it.return?.(undefined);
      yield errorItem(
        0,
        undefined,
        'too-large',
        `JSON document is longer than ${maxDoc} characters; send NDJSON (one spectrum per line) instead`,
        { file },
      );
      return;
    }
  }
  if (text.trim().length === 0) {
    yield errorItem(0, undefined, 'syntax', 'the input is empty', { file });
    return;
  }
  let doc: unknown;
  try {
    doc = JSON.parse(text);
  } catch (err) {
    if (looksLikeNdjson(text)) {
      // NDJSON whose first line is broken: read it line by line so the other spectra survive.
      yield* readNdjson([text], file, maxLine);
      return;
    }
    const message = (err as Error).message;
    const pos = /at position (\d+)/.exec(message);
    const line = pos ? lineAt(text, Number(pos[1])) : undefined;
    yield errorItem(
      0,
      undefined,
      'syntax',
      `the input is not valid JSON: ${message}`,
      line ? { file, line } : { file },
    );
    return;
  }
  text = '';
  let list: unknown[];
  let prefix: string;
  if (Array.isArray(doc)) {
    list = doc;
    prefix = '';
  } else if (isObject(doc) && Array.isArray(doc.spectra)) {
    list = doc.spectra;
    prefix = '/spectra';
  } else if (isObject(doc) && ('peaks' in doc || 'precursor' in doc)) {
    list = [doc];
    prefix = '';
  } else {
    yield errorItem(0, undefined, 'syntax', 'expected an array of spectra, { "spectra": [...] }, or NDJSON', {
      file,
      path: '',
    });
    return;
  }
  const single = list.length === 1 && list[0] === doc;
  for (let i = 0; i < list.length; i++) {
    yield checkSpectrum(list[i], i, single ? '' : `${prefix}/${i}`, { file, index: i });
  }
}

/** Reads NDJSON: one spectrum (or `{ "spectra": [...] }`) per line; blank lines are skipped. */
async function* readNdjson(
  chunks: AsyncIterable<string> | Iterable<string>,
  file: string | undefined,
  maxLine: number,
): AsyncGenerator<ReadItem> {
  const out: ReadItem[] = [];
  let index = 0;
  const splitter = new LineSplitter((text, line, tooLong) => {
    const t = text.trim();
    if (t.length === 0) return;
    const at = { file, line, index };
    if (tooLong) {
      out.push(
        errorItem(index++, undefined, 'too-large', `line ${line} is longer than ${maxLine} characters`, at),
      );
      return;
    }
    let value: unknown;
    try {
      value = JSON.parse(t);
    } catch (err) {
      out.push(
        errorItem(
          index++,
          undefined,
          'syntax',
          `line ${line} is not valid JSON: ${(err as Error).message}`,
          at,
        ),
      );
      return;
    }
    if (isObject(value) && Array.isArray(value.spectra)) {
      value.spectra.forEach((s, i) => {
        out.push(checkSpectrum(s, index, `/spectra/${i}`, { file, line, index }));
        index++;
      });
      return;
    }
    out.push(checkSpectrum(value, index, '', at));
    index++;
  }, maxLine);
  for await (const chunk of chunks) {
    splitter.push(chunk);
    if (out.length > 0) yield* out.splice(0);
  }
  splitter.end();
  yield* out.splice(0);
}

/**
 * True when the first two non-blank lines each start an object and the second is a whole one: NDJSON with a
 * broken first line, not a pretty-printed document (whose second line would be a key).
 */
function looksLikeNdjson(text: string): boolean {
  const lines: string[] = [];
  let start = 0;
  while (start < text.length && lines.length < 2) {
    let end = text.indexOf('\n', start);
    if (end < 0) end = text.length;
    const line = text.slice(start, end).trim();
    if (line.length > 0) lines.push(line);
    start = end + 1;
  }
  const [a, b] = lines;
  return a !== undefined && b !== undefined && a[0] === '{' && b[0] === '{' && b[b.length - 1] === '}';
}

/** Validates one spectrum value: a spectrum item, or an error item pointing at the first problem. */
function checkSpectrum(value: unknown, index: number, pointer: string, at: ReadIssue['position']): ReadItem {
  const id = isObject(value) && typeof value.id === 'string' && value.id.length > 0 ? value.id : undefined;
  const position = { ...at, index, ...(id ? { id } : {}) };
  const r = parseSpectrum(value);
  if (!r.success) {
    const first = r.error.issues[0]!;
    const path = first.path.map((k) => String(k));
    const more = r.error.issues.length > 1 ? ` (and ${r.error.issues.length - 1} more problems)` : '';
    const where = path.length > 0 ? path.join('.') : 'spectrum';
    return errorItem(index, id, codeFor(path, value), `${where}: ${first.message}${more}`, {
      ...position,
      path: pointer + path.map((k) => `/${escapePointer(k)}`).join(''),
    });
  }
  const spectrum: Spectrum = r.data;
  const warnings: ReadIssue[] = [];
  const warn = (code: ReadIssueCode, message: string, path = pointer) =>
    warnings.push({ code, severity: 'warning', message, position: { ...position, path } });
  if (isObject(value)) {
    for (const k of Object.keys(value)) {
      if (!SPECTRUM_KEYS.has(k))
        warn('unknown-key', `unknown key "${k}" ignored`, `${pointer}/${escapePointer(k)}`);
    }
    if (isObject(value.precursor)) {
      for (const k of Object.keys(value.precursor)) {
        if (!PRECURSOR_KEYS.has(k)) {
          warn(
            'unknown-key',
            `unknown key "precursor.${k}" ignored`,
            `${pointer}/precursor/${escapePointer(k)}`,
          );
        }
      }
    }
  }
  if (!peaksSorted(spectrum.peaks)) {
    sortPeaks(spectrum.peaks);
    warn('unsorted-peaks', 'peaks were not in m/z order; sorted', `${pointer}/peaks`);
  }
  if (spectrum.peaks.length === 0) warn('no-peaks', 'spectrum has no peaks', `${pointer}/peaks`);
  const item: SpectrumItem = { kind: 'spectrum', index, spectrum, warnings };
  return item;
}

/**
 * {@link SpectrumSchema} validation with a fast path for the peak list, which dominates its cost (a zod tuple
 * per peak). A peak list that passes {@link peaksValid} is checked here and the rest of the spectrum by the
 * schema; anything else goes through the schema whole, so every error still comes from the schema. A property
 * test holds {@link peaksValid} to the schema's verdict.
 */
function parseSpectrum(value: unknown): ReturnType<typeof SpectrumSchema.safeParse> {
  if (!isObject(value) || !peaksValid(value.peaks)) return SpectrumSchema.safeParse(value);
  const r = SpectrumSchema.safeParse({ ...value, peaks: [] });
  if (r.success) r.data.peaks = value.peaks as Spectrum['peaks'];
  return r;
}

/** True when `peaks` is a list the spectrum schema accepts: `[m/z > 0, intensity ≥ 0]` pairs of finite numbers. */
export function peaksValid(peaks: unknown): boolean {
  if (!Array.isArray(peaks) || peaks.length > MAX_PEAKS) return false;
  for (let i = 0; i < peaks.length; i++) {
    const p: unknown = peaks[i];
    if (!Array.isArray(p) || p.length !== 2) return false;
    const m: unknown = p[0];
    const y: unknown = p[1];
    if (typeof m !== 'number' || typeof y !== 'number') return false;
    if (!(m > 0 && m < Number.POSITIVE_INFINITY && y >= 0 && y < Number.POSITIVE_INFINITY)) return false;
  }
  return true;
}

/** The reader code for a schema problem at `path`, shared with the text readers where the meaning is the same. */
function codeFor(path: string[], value: unknown): ReadIssueCode {
  if (path[0] === 'precursor') {
    if (path[1] === 'charge') return 'bad-charge';
    const p = isObject(value) ? value.precursor : undefined;
    if (path.length === 1 || (path[1] === 'mz' && (!isObject(p) || p.mz === undefined)))
      return 'missing-precursor';
    return 'bad-precursor';
  }
  if (path[0] === 'peaks' && path.length > 1) return 'bad-peak';
  if (
    path[0] === 'polarity' &&
    isObject(value) &&
    isObject(value.precursor) &&
    value.precursor.charge !== undefined
  ) {
    return 'bad-charge';
  }
  return 'invalid-spectrum';
}

function errorItem(
  index: number,
  id: string | undefined,
  code: ReadIssueCode,
  message: string,
  position: ReadIssue['position'],
): ReadItem {
  const issue: ReadIssue = { code, severity: 'error', message, position };
  return id === undefined ? { kind: 'error', index, issue } : { kind: 'error', index, id, issue };
}

function isObject(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** RFC 6901 escaping of one reference token. */
function escapePointer(token: string): string {
  return token.replace(/~/g, '~0').replace(/\//g, '~1');
}

function lineAt(text: string, pos: number): number {
  let line = 1;
  for (let i = text.indexOf('\n'); i >= 0 && i < pos; i = text.indexOf('\n', i + 1)) line++;
  return line;
}
