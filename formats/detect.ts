import { createReadStream } from 'node:fs';
import { Readable } from 'node:stream';
import { constants as zlibConstants, createGunzip } from 'node:zlib';
import { type JsonReadOptions, readJsonSpectra } from './json-input.js';
import { type MgfReadOptions, readMgf } from './mgf.js';
import { type MzmlReadOptions, readMzml } from './mzml.js';
import type { ReadItem } from './read-types.js';
import { type ReadSource, sourceChunks } from './source.js';

/** The spectrum file formats Peel reads. */
export type SpectrumFormat = 'mgf' | 'mzml' | 'json';

/** Options of {@link readSpectra} and {@link readSpectraFile}: those of every reader, plus the format. */
export interface ReadSpectraOptions extends MgfReadOptions, MzmlReadOptions, JsonReadOptions {
  /**
   * The format, when the caller knows it.
   * @defaultValue from the file name's extension (`options.file`), else from the first bytes
   */
  format?: SpectrumFormat;
}

const EXTENSIONS: Record<string, SpectrumFormat> = {
  mgf: 'mgf',
  mzml: 'mzml',
  json: 'json',
  ndjson: 'json',
  jsonl: 'json',
};

/** How many bytes are looked at to recognise a format. */
const SNIFF_BYTES = 4096;

/** The format a file name's extension names (a trailing `.gz` is looked through), if any. */
export function formatFromName(name: string): SpectrumFormat | undefined {
  const m = /\.([A-Za-z]+)(?:\.gz)?$/i.exec(name);
  return m ? EXTENSIONS[m[1]!.toLowerCase()] : undefined;
}

/** True when the bytes start like gzip data (RFC 1952 magic `1f 8b`). */
export function isGzip(head: Uint8Array): boolean {
  return head.length >= 2 && head[0] === 0x1f && head[1] === 0x8b;
}

/**
 * Recognises a format from the start of the content: XML is mzML, `[` or `{` is JSON, and `BEGIN IONS` or a
 * `KEY=VALUE` first line is MGF.
 */
export function sniffFormat(head: Uint8Array | string): SpectrumFormat | undefined {
  let text =
    typeof head === 'string'
      ? head
      : Buffer.from(head.buffer, head.byteOffset, head.byteLength).toString('latin1');
  text = text.replace(/^(\uFEFF|\u00EF\u00BB\u00BF)/, '').trimStart();
  const c = text[0];
  if (c === '<') return 'mzml';
  if (c === '[' || c === '{') return 'json';
  if (/^BEGIN IONS\s*$/im.test(text)) return 'mgf';
  for (const line of text.split(/\r?\n/)) {
    const t = line.trim();
    if (t === '' || /^[#;!/]/.test(t)) continue;
    return /^[A-Za-z_][A-Za-z0-9_ .-]*=/.test(t) ? 'mgf' : undefined;
  }
  return undefined;
}

/**
 * Reads spectra in any supported format from a stream, choosing the reader by `options.format`, else the
 * extension of `options.file`, else the first bytes; gzip-compressed input is recognised by its magic bytes
 * and decompressed on the fly. Input in no known format yields one `unknown-format` error item; corrupt gzip
 * data ends the read with a `bad-compression` error item (a gzip file cut short reads as a truncated file).
 */
export async function* readSpectra(
  source: ReadSource,
  options: ReadSpectraOptions = {},
): AsyncGenerator<ReadItem> {
  let next = 0;
  let gzip = false;
  try {
    let { head, chunks, close } = await peek(sourceChunks(source));
    if (typeof head !== 'string' && isGzip(head)) {
      gzip = true;
      const outer = close;
      const inner = await peek(gunzipChunks(chunks));
      head = inner.head;
      chunks = inner.chunks;
      close = async () => {
        await inner.close();
        await outer();
      };
    }
    const format =
      options.format ?? (options.file ? formatFromName(options.file) : undefined) ?? sniffFormat(head);
    if (!format) {
      await close();
      yield {
        kind: 'error',
        index: 0,
        issue: {
          code: 'unknown-format',
          severity: 'error',
          message: 'the input is not MGF, mzML or JSON (by name or content)',
          position: { file: options.file },
        },
      };
      return;
    }
    const reader =
      format === 'mgf'
        ? readMgf(chunks, options)
        : format === 'mzml'
          ? readMzml(chunks, options)
          : readJsonSpectra(chunks, options);
    for await (const item of reader) {
      next = item.index + 1;
      yield item;
    }
  } catch (err) {
    if (!gzip || !isZlibError(err)) throw err;
    yield {
      kind: 'error',
      index: next,
      issue: {
        code: 'bad-compression',
        severity: 'error',
        message: `gzip data is corrupt (${(err as Error).message}); spectra after this point are lost`,
        position: { file: options.file, index: next },
      },
    };
  }
}

/** Opens a spectrum file (MGF, mzML, JSON/NDJSON, each optionally gzip-compressed) and streams it through {@link readSpectra}. */
export function readSpectraFile(path: string, options: ReadSpectraOptions = {}): AsyncGenerator<ReadItem> {
  const stream = createReadStream(path, { highWaterMark: 256 * 1024 });
  return readSpectra(stream, { ...options, file: options.file ?? path });
}

/** Reads the first chunks (at least {@link SNIFF_BYTES} when there are that many) and gives them back in front of the rest. */
async function peek(
  source: AsyncIterable<Buffer | string>,
): Promise<{ head: Buffer | string; chunks: AsyncIterable<Buffer | string>; close: () => Promise<void> }> {
  const it = source[Symbol.asyncIterator]();
  const first: (Buffer | string)[] = [];
  let size = 0;
  let ended = false;
  while (size < SNIFF_BYTES) {
    const r = await it.next();
    if (r.done) {
      ended = true;
      break;
    }
    first.push(r.value);
    size += r.value.length;
  }
  const head =
    first.length > 0 && first.every((c) => typeof c === 'string')
      ? first.join('')
      : Buffer.concat(first.map((c) => (typeof c === 'string' ? Buffer.from(c) : c)));
  const chunks = (async function* () {
    yield* first;
    if (ended) return;
    for (;;) {
      const r = await it.next();
      if (r.done) return;
      yield r.value;
    }
  })();
  const close = async () => {
    await it.return?.(undefined);
  };
  return { head, chunks, close };
}

/** Decompresses gzip data as it streams; a stream cut short yields what it holds instead of failing. */
async function* gunzipChunks(chunks: AsyncIterable<Buffer | string>): AsyncGenerator<Buffer> {
  const input = Readable.from(chunks, { objectMode: false });
  const gz = createGunzip({ finishFlush: zlibConstants.Z_SYNC_FLUSH });
  input.on('error', (err) => gz.destroy(err));
  input.pipe(gz);
  try {
    for await (const chunk of gz) yield chunk as Buffer;
  } finally {
    input.destroy();
    gz.destroy();
  }
}

function isZlibError(err: unknown): boolean {
  const code = (err as { code?: unknown } | undefined)?.code;
  return typeof code === 'string' && code.startsWith('Z_');
}
