import { StringDecoder } from 'node:string_decoder';

/**
 * What every reader reads from: a Node `Readable`, any async iterable of chunks, or a whole document given
 * as one string or buffer (handy in tests and for small HTTP bodies).
 */
export type ReadSource =
  | AsyncIterable<Buffer | Uint8Array | string>
  | Iterable<Buffer | Uint8Array | string>
  | string
  | Uint8Array;

/** Iterates a {@link ReadSource} as chunks; a whole string or buffer is one chunk. */
export async function* sourceChunks(source: ReadSource): AsyncGenerator<Buffer | string> {
  if (typeof source === 'string') {
    yield source;
    return;
  }
  if (source instanceof Uint8Array) {
    yield Buffer.isBuffer(source) ? source : Buffer.from(source.buffer, source.byteOffset, source.byteLength);
    return;
  }
  for await (const chunk of source as AsyncIterable<Buffer | Uint8Array | string>) {
    if (typeof chunk === 'string' || Buffer.isBuffer(chunk)) yield chunk;
    else yield Buffer.from(chunk.buffer, chunk.byteOffset, chunk.byteLength);
  }
}

/** Default longest line a text reader keeps (longer lines are reported, not buffered). */
export const MAX_LINE_LENGTH = 1 << 20;

/**
 * Splits a stream of chunks into lines (LF or CRLF) without holding more than one line in memory.
 * A line longer than `maxLineLength` is passed on cut short with `tooLong` set, and the rest of it is dropped,
 * so a file with no line breaks cannot make a reader buffer the whole file.
 */
export class LineSplitter {
  private readonly decoder = new StringDecoder('utf8');
  private rest = '';
  private lineNo = 0;
  private skipping = false;

  constructor(
    private readonly onLine: (text: string, line: number, tooLong: boolean) => void,
    private readonly maxLineLength = MAX_LINE_LENGTH,
  ) {}

  /** Feeds one chunk; calls `onLine` for every complete line in it. */
  push(chunk: Buffer | string): void {
    let s = typeof chunk === 'string' ? chunk : this.decoder.write(chunk);
    if (this.rest.length > 0) {
      s = this.rest + s;
      this.rest = '';
    }
    let start = 0;
    for (;;) {
      const nl = s.indexOf('\n', start);
      if (nl < 0) break;
      this.emit(s.slice(start, nl));
      start = nl + 1;
    }
    const tail = start === 0 ? s : s.slice(start);
    if (tail.length > this.maxLineLength) {
      if (!this.skipping) {
        this.lineNo++;
        this.onLine(tail.slice(0, 200), this.lineNo, true);
        this.skipping = true;
      }
      this.rest = '';
    } else {
      this.rest = tail;
    }
  }

  /** Flushes the last line (one without a final line break). */
  end(): void {
    const s = this.rest + this.decoder.end();
    this.rest = '';
    if (s.length > 0 || this.skipping) this.emit(s);
  }

  /** Number of lines passed on so far. */
  get lines(): number {
    return this.lineNo;
  }

  private emit(raw: string): void {
    if (this.skipping) {
      // The end of an overlong line already reported.
      this.skipping = false;
      return;
    }
    this.lineNo++;
    let text = raw.charCodeAt(raw.length - 1) === 13 ? raw.slice(0, -1) : raw;
    if (this.lineNo === 1 && text.charCodeAt(0) === 0xfeff) text = text.slice(1);
    if (text.length > this.maxLineLength) this.onLine(text.slice(0, 200), this.lineNo, true);
    else this.onLine(text, this.lineNo, false);
  }
}
