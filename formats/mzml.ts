import { isAscii } from 'node:buffer';
import { StringDecoder } from 'node:string_decoder';
import { SaxesParser, type SaxesTagPlain } from 'saxes';
import type { Peak, Spectrum, SpectrumMetadata } from '../engine/spectrum/spectrum.js';
import { type BinaryCompression, type BinaryPrecision, decodeBinaryArray } from './mzml-binary.js';
import { parseDecimal } from './peaks.js';
import type { ReadIssue, ReadIssueCode, ReadItem, ReadOptions } from './read-types.js';
import { type ReadSource, sourceChunks } from './source.js';

/** Counts an mzML read leaves behind (spectra that yield no item are only counted here). */
export interface MzmlReadStats {
  /** `<spectrum>` elements seen. */
  spectra: number;
  /** Spectra yielded as spectrum items. */
  read: number;
  /** Error items yielded. */
  errors: number;
  /** Spectra skipped because they are not MS2, by MS level (`"1"`, `"3"`, `"unknown"`). */
  skipped: Record<string, number>;
}

/** Options of {@link readMzml}. */
export interface MzmlReadOptions extends ReadOptions {
  /** Filled in as the file is read: how many spectra were seen, read, failed and skipped. */
  stats?: MzmlReadStats;
  /**
   * Longest `<spectrum>` element read, in characters; a longer one is reported (`too-large`) and skipped
   * without being held in memory.
   * @defaultValue 256 MiB
   */
  maxSpectrumLength?: number;
}

/** A fresh, zeroed {@link MzmlReadStats} to pass as `options.stats`. */
export function createMzmlStats(): MzmlReadStats {
  return { spectra: 0, read: 0, errors: 0, skipped: {} };
}

// PSI-MS controlled vocabulary accessions (psi-ms.obo) used by the reader.
const CV = {
  msLevel: 'MS:1000511',
  ms1Spectrum: 'MS:1000579',
  positive: 'MS:1000130',
  negative: 'MS:1000129',
  profile: 'MS:1000128',
  scanStartTime: 'MS:1000016',
  selectedIonMz: 'MS:1000744',
  mzUnitAsSelectedIon: 'MS:1000040',
  chargeState: 'MS:1000041',
  possibleChargeState: 'MS:1000633',
  peakIntensity: 'MS:1000042',
  collisionEnergy: 'MS:1000045',
  mzArray: 'MS:1000514',
  intensityArray: 'MS:1000515',
  float32: 'MS:1000521',
  float64: 'MS:1000523',
  zlib: 'MS:1000574',
  noCompression: 'MS:1000576',
} as const;

/** Binary data types and compressions this reader does not decode, by accession, with their CV names. */
const UNSUPPORTED: Record<string, string> = {
  'MS:1000519': '32-bit integer',
  'MS:1000522': '64-bit integer',
  'MS:1000520': '16-bit float',
  'MS:1001479': 'null-terminated ASCII string',
  'MS:1002312': 'MS-Numpress linear prediction compression',
  'MS:1002313': 'MS-Numpress positive integer compression',
  'MS:1002314': 'MS-Numpress short logged float compression',
  'MS:1002746': 'MS-Numpress linear prediction compression followed by zlib compression',
  'MS:1002747': 'MS-Numpress positive integer compression followed by zlib compression',
  'MS:1002748': 'MS-Numpress short logged float compression followed by zlib compression',
  'MS:1003088': 'truncation, delta prediction and zlib compression',
  'MS:1003089': 'truncation, linear prediction and zlib compression',
  'MS:1003090': 'truncation and zlib compression',
};

/** Scan start time units (UO, and the obsolete MS minute term) to seconds. */
const TIME_UNITS: Record<string, number> = {
  'UO:0000010': 1,
  'UO:0000031': 60,
  'MS:1000038': 60,
  'UO:0000028': 0.001,
  'UO:0000032': 3600,
};

const MAX_CHARGE = 10;
const MAX_PRECURSOR_MZ = 20000;
const MAX_ID_LENGTH = 256;
/** Largest peak list the spectrum schema accepts. */
const MAX_PEAKS = 200000;
/** XML errors in the header after which the outer parser is given up (spectra are still read). */
const MAX_OUTER_ERRORS = 1000;
/** Default longest `<spectrum>` element read, in characters. */
const DEFAULT_MAX_SPECTRUM_LENGTH = 256 * 2 ** 20;
const SPECTRUM_OPEN = '<spectrum';
const SPECTRUM_CLOSE = '</spectrum>';
const BINARY_OPEN = '<binary>';
const BINARY_CLOSE = '</binary>';
const LIFTED_NAME = 'binary-lifted';
const LIFTED = `<${LIFTED_NAME}/>`;

type SpectrumItem = Extract<ReadItem, { kind: 'spectrum' }>;

interface CvParam {
  accession: string;
  name: string;
  value: string;
  unitAccession: string;
}

/** Where a cvParam sits inside a spectrum, which decides what it means. */
type Ctx =
  | 'spectrum'
  | 'scanList'
  | 'scan'
  | 'precursorList'
  | 'precursor'
  | 'selectedIonList'
  | 'selectedIon'
  | 'activation'
  | 'arrays'
  | 'array'
  | 'binary'
  | 'ignore';

interface ArrayState {
  kind?: 'mz' | 'intensity';
  precision?: BinaryPrecision;
  compression?: BinaryCompression;
  unsupported?: string;
  arrayLength?: number;
  text: string;
}

interface SpectrumState {
  index: number;
  id: string | undefined;
  line: number;
  defaultArrayLength: number | undefined;
  msLevel: number | undefined;
  ms1Term: boolean;
  polarity: 'positive' | 'negative' | undefined;
  profile: boolean;
  scans: number;
  precursors: number;
  selectedIons: number;
  mz: string | undefined;
  charge: string | undefined;
  possibleCharges: string[];
  precursorIntensity: string | undefined;
  rt: CvParam | undefined;
  activation: string[];
  collisionEnergy: string | undefined;
  arrays: ArrayState[];
  array: ArrayState | undefined;
  error: ReadIssue | undefined;
  warnings: ReadIssue[];
}

/**
 * Reads MS2 spectra from an mzML 1.1 file (HUPO-PSI), indexed (`<indexedmzML>`) or plain, streaming: memory
 * stays flat whatever the file size, since one spectrum at a time is held and items are yielded after each chunk.
 * Each `<spectrum>` element is cut out of the stream and parsed on its own (saxes, reset in between), so
 * malformed XML or garbage bytes inside one spectrum cannot spill into the next; the rest of the document
 * (parameter groups, the spectrum list) goes through a second parser. (A literal `</spectrum>` inside an XML
 * comment in a spectrum would end it early; mzML writers do not put comments there.)
 *
 * Spectra whose MS level (MS:1000511, also through a `referenceableParamGroupRef`) is not 2 are skipped
 * without an item and counted in `options.stats`. Peaks come from the m/z (MS:1000514) and intensity
 * (MS:1000515) arrays: base64, zlib (MS:1000574) or uncompressed (MS:1000576), 32- or 64-bit little-endian
 * floats (MS:1000521/MS:1000523). The precursor is the first selected ion of the first precursor: m/z
 * (MS:1000744), charge (MS:1000041, else the first MS:1000633 possible charge with a warning), intensity
 * (MS:1000042); the charge is signed by the polarity (MS:1000130 positive / MS:1000129 negative; taken as
 * positive when the file gives none). The retention time is the first scan's start time (MS:1000016) in
 * seconds. Collision energy and activation type go to metadata.
 *
 * Each spectrum that cannot be read yields one error item (positions: spectrum index, id and line) and the
 * reader goes on: MS-Numpress or any other unsupported encoding (`unsupported-encoding`), bad base64 or
 * corrupt zlib data (`bad-binary`), arrays whose length differs from `defaultArrayLength` or from each other
 * (`array-length-mismatch`), NaN, infinite or negative values (`bad-peak`, `bad-precursor`, `bad-value`),
 * no precursor (`missing-precursor`), a charge of 0 or beyond ±10 (`bad-charge`), malformed XML inside the
 * spectrum (`syntax`), and a file that ends early (`truncated`). Peaks at m/z 0 are dropped and unsorted
 * peaks sorted, each with a warning; an MS2 spectrum with no peaks is yielded with a `no-peaks` warning so
 * that its id still reaches the results. A document that is not mzML yields one `syntax` error item.
 */
export async function* readMzml(source: ReadSource, options: MzmlReadOptions = {}): AsyncGenerator<ReadItem> {
  const reader = new MzmlParser(options);
  let decoder: StringDecoder | undefined;
  let encoding: 'latin1' | 'utf8' | undefined;
  // Most mzML files are pure ASCII: such chunks take a plain byte copy; the UTF-8 decoder (which carries
  // characters split across chunks) takes over for good at the first chunk that is not.
  let ascii = true;
  for await (const chunk of sourceChunks(source)) {
    if (typeof chunk === 'string') reader.write(chunk);
    else {
      encoding ??= xmlEncoding(chunk);
      if (encoding === 'latin1') reader.write(chunk.toString('latin1'));
      else if (ascii && isAscii(chunk)) reader.write(chunk.toString('latin1'));
      else {
        ascii = false;
        decoder ??= new StringDecoder('utf8');
        reader.write(decoder.write(chunk));
      }
    }
    if (reader.out.length > 0) yield* reader.drain();
    if (reader.stopped) return;
  }
  if (decoder) reader.write(decoder.end());
  reader.end();
  yield* reader.drain();
}

/** The decoder for the document's declared encoding (ISO-8859-1 and friends, else UTF-8). */
function xmlEncoding(first: Buffer): 'latin1' | 'utf8' {
  const head = first.subarray(0, 200).toString('latin1');
  const m = /^\s*<\?xml[^>]*encoding\s*=\s*["']([^"']+)["']/.exec(head);
  return m && /^(iso-?8859-1|latin-?1|us-ascii|ascii|windows-1252)$/i.test(m[1]!) ? 'latin1' : 'utf8';
}

class MzmlParser {
  out: ReadItem[] = [];
  stopped = false;
  private readonly file: string | undefined;
  private readonly stats: MzmlReadStats;
  private readonly maxSpectrumLength: number;
  /** Parses everything but the spectra: the header (parameter groups), the root and the spectrum list. */
  private readonly outer: SaxesParser<{ xmlns: false }>;
  /** Parses one `<spectrum>` element at a time, reset after each, so a broken spectrum cannot spill over. */
  private readonly inner: SaxesParser<{ xmlns: false; fragment: true }>;
  private readonly groups = new Map<string, CvParam[]>();
  private group: CvParam[] | undefined;
  private rootSeen = false;
  private rootClosed = false;
  private listOpen = false;
  private listSeen = false;
  private listCount: number | undefined;
  private nextIndex = 0;
  private cur: SpectrumState | undefined;
  private readonly ctx: Ctx[] = [];
  /** Set while a parser is being closed: its complaints about unclosed tags are handled here, not reported. */
  private closing = false;
  private outerStuck = false;
  private outerErrors = 0;
  private stray: ReadIssue | undefined;
  private strayCount = 0;

  // The splitter: text outside spectra goes to `outer`; each spectrum element is cut out whole for `inner`.
  private mode: 'outer' | 'spectrum' = 'outer';
  private pending = '';
  private pieces: string[] = [];
  private piecesLength = 0;
  private tail = '';
  /** Base64 texts lifted out of the current spectrum, in document order. */
  private readonly binaries: string[] = [];
  private nextBinary = 0;
  private discarding = false;
  /** Line number at the start of the text not yet handed to a parser. */
  private line = 1;
  private blockLine = 1;

  constructor(options: MzmlReadOptions) {
    this.file = options.file;
    this.stats = options.stats ?? createMzmlStats();
    this.maxSpectrumLength = options.maxSpectrumLength ?? DEFAULT_MAX_SPECTRUM_LENGTH;
    this.outer = new SaxesParser({ xmlns: false, position: true });
    this.outer.on('opentag', (tag) => this.outerOpen(tag));
    this.outer.on('closetag', (tag) => this.outerClose(tag));
    this.outer.on('error', (err) => this.outerError(err));
    this.inner = new SaxesParser({ xmlns: false, fragment: true, position: true });
    this.inner.on('opentag', (tag) => this.open(tag));
    this.inner.on('closetag', () => this.close());
    this.inner.on('text', (text) => {
      // Only an unlifted <binary> (one whose close tag is missing) has text left.
      const cur = this.cur;
      if (cur?.array && this.ctx[this.ctx.length - 1] === 'binary') cur.array.text += text;
    });
    this.inner.on('error', (err) => this.innerError(err));
  }

  drain(): ReadItem[] {
    const items = this.out;
    this.out = [];
    return items;
  }

  /** Takes the next piece of the document. */
  write(text: string): void {
    // Positions into `s` instead of slices of it: cutting many spectra out of one large chunk must not copy
    // the rest of the chunk each time.
    const s = this.mode === 'outer' && this.pending.length > 0 ? this.pending + text : text;
    this.pending = '';
    let pos = 0;
    while (pos < s.length && !this.stopped) {
      if (this.mode === 'outer') {
        const i = findSpectrumStart(s, pos);
        if (i < 0) {
          // Keep an unfinished tag at the end for the next round (so tag names are never split).
          const lt = s.lastIndexOf('<');
          const cut = lt >= pos && s.length - lt <= 64 && s.indexOf('>', lt) < 0 ? lt : s.length;
          this.feedOuter(s.slice(pos, cut));
          this.pending = s.slice(cut);
          return;
        }
        this.feedOuter(s.slice(pos, i));
        if (this.stopped) return;
        if (!this.rootSeen) {
          this.fatal('not an mzML document: a <spectrum> outside any <mzML> element', this.line);
          return;
        }
        this.mode = 'spectrum';
        this.blockLine = this.line;
        this.pieces = [];
        this.piecesLength = 0;
        this.tail = '';
        this.discarding = false;
        pos = i;
      } else {
        let end = -1;
        if (this.tail.length > 0) {
          // The close tag may straddle the previous chunk's end.
          const k = (this.tail + s.slice(pos, pos + SPECTRUM_CLOSE.length)).indexOf(SPECTRUM_CLOSE);
          if (k >= 0) end = pos + k + SPECTRUM_CLOSE.length - this.tail.length;
        }
        if (end < 0) {
          const j = s.indexOf(SPECTRUM_CLOSE, pos);
          if (j >= 0) end = j + SPECTRUM_CLOSE.length;
        }
        if (end < 0) {
          this.addPiece(s.slice(pos));
          this.tail =
            s.length - pos >= SPECTRUM_CLOSE.length - 1
              ? s.slice(-(SPECTRUM_CLOSE.length - 1))
              : (this.tail + s.slice(pos)).slice(-(SPECTRUM_CLOSE.length - 1));
          return;
        }
        this.tail = '';
        this.mode = 'outer';
        const last = s.slice(pos, end);
        pos = end;
        let block: string;
        if (this.pieces.length === 0) block = last;
        else {
          this.addPiece(last);
          block = this.pieces.join('');
          this.pieces = [];
        }
        if (this.discarding) this.discarding = false;
        else this.parseBlock(block);
        this.line = this.blockLine + countLines(block);
      }
    }
  }

  end(): void {
    if (this.stopped) return;
    if (this.mode === 'spectrum') {
      const block = this.pieces.join('');
      this.pieces = [];
      if (!this.discarding) {
        this.inner.write(block);
        const cur = this.cur;
        const line = this.blockLine + countLines(block);
        this.resetInner();
        const index = cur ? cur.index : this.nextIndex++;
        if (!cur) this.stats.spectra++;
        this.emitError(index, cur?.id, {
          code: 'truncated',
          severity: 'error',
          message: `file ends (line ${line}) inside spectrum ${cur?.id ?? index} opened at line ${this.blockLine}`,
          position: { file: this.file, line: this.blockLine, index, id: cur?.id },
        });
      }
      this.listOpen = false;
    } else {
      this.feedOuter(this.pending);
      this.pending = '';
    }
    const line = this.line;
    this.closing = true;
    if (!this.outerStuck) this.outer.close();
    this.closing = false;
    if (this.listOpen) {
      const of = this.listCount !== undefined ? ` of the ${this.listCount} announced` : '';
      this.emitError(this.nextIndex, undefined, {
        code: 'truncated',
        severity: 'error',
        message: `file ends (line ${line}) after ${this.nextIndex} spectra${of}, inside the spectrum list`,
        position: { file: this.file, line, index: this.nextIndex },
      });
    } else if (!this.rootSeen) {
      this.emitError(0, undefined, {
        code: 'syntax',
        severity: 'error',
        message: 'no mzML document: the input has no <mzML> element',
        position: { file: this.file, line },
      });
    } else if (!this.listSeen && !this.rootClosed) {
      this.emitError(0, undefined, {
        code: 'truncated',
        severity: 'error',
        message: `file ends (line ${line}) before its spectrum list`,
        position: { file: this.file, line },
      });
    }
    if (this.stray) {
      this.emitError(this.nextIndex, undefined, {
        ...this.stray,
        severity: 'error',
        message: this.strayMessage(),
      });
      this.stray = undefined;
    }
  }

  private addPiece(piece: string): void {
    if (this.discarding) return;
    this.pieces.push(piece);
    this.piecesLength += piece.length;
    if (this.piecesLength > this.maxSpectrumLength) {
      // Report the spectrum now and drop the rest of it, so memory stays bounded.
      const head = this.pieces.join('').slice(0, 2000);
      const id = /^<spectrum\b[^>]*?\bid="([^"]*)"/.exec(head)?.[1];
      const index = this.nextIndex++;
      this.stats.spectra++;
      this.emitError(index, id, {
        code: 'too-large',
        severity: 'error',
        message: `spectrum ${id ?? index} is longer than ${this.maxSpectrumLength} characters; skipped`,
        position: { file: this.file, line: this.blockLine, index, id },
      });
      this.pieces = [];
      this.discarding = true;
    }
  }

  private feedOuter(text: string): void {
    if (text.length === 0) return;
    if (!this.outerStuck) this.outer.write(text);
    // The end tags are also found by name, since the outer parser is given up after malformed XML.
    if (this.listSeen && text.includes('</spectrumList>')) this.listOpen = false;
    if (this.rootSeen && (text.includes('</mzML>') || text.includes('</indexedmzML>')))
      this.rootClosed = true;
    this.line += countLines(text);
  }

  private parseBlock(block: string): void {
    this.inner.write(this.liftBinaries(block));
    const cur = this.cur;
    if (cur) {
      // The element did not close (malformed XML inside it).
      this.cur = undefined;
      cur.error ??= this.issue(cur, 'syntax', `spectrum ${cur.id ?? cur.index} is not well-formed XML`);
      this.finish(cur);
    }
    this.resetInner();
  }

  /**
   * Takes the base64 text of each `<binary>` out of the spectrum's XML (it is most of the bytes, and an XML
   * parser would look at every character of it) and leaves a `<binary-lifted/>` marker in its place.
   */
  private liftBinaries(block: string): string {
    this.binaries.length = 0;
    this.nextBinary = 0;
    let a = block.indexOf(BINARY_OPEN);
    if (a < 0) return block;
    let out = '';
    let pos = 0;
    while (a >= 0) {
      const b = block.indexOf(BINARY_CLOSE, a + BINARY_OPEN.length);
      if (b < 0) break;
      this.binaries.push(block.slice(a + BINARY_OPEN.length, b));
      out += block.slice(pos, a) + LIFTED;
      pos = b + BINARY_CLOSE.length;
      a = block.indexOf(BINARY_OPEN, pos);
    }
    return out + block.slice(pos);
  }

  private resetInner(): void {
    this.cur = undefined;
    this.closing = true;
    this.inner.close();
    this.closing = false;
  }

  private fatal(message: string, line: number): void {
    this.emitError(0, undefined, {
      code: 'syntax',
      severity: 'error',
      message,
      position: { file: this.file, line },
    });
    this.stopped = true;
  }

  private outerError(err: Error): void {
    if (this.closing || this.stopped) return;
    const message = err.message.replace(/^\d+:\d+: /, '');
    if (!this.rootSeen) {
      this.fatal(`not an mzML document: ${message} (near line ${this.line})`, this.line);
      return;
    }
    this.strayCount++;
    this.stray ??= {
      code: 'syntax',
      severity: 'warning',
      message: `malformed XML near line ${this.line}, ${this.listSeen ? 'between spectra' : 'in the header'}: ${message}`,
      position: { file: this.file, line: this.line },
    };
    if (this.listSeen || ++this.outerErrors >= MAX_OUTER_ERRORS) {
      // saxes may never recover (e.g. after a stray `<!`). Past the header nothing more is needed from it:
      // spectra are cut out by the splitter and the list's end is found by name.
      this.outerStuck = true;
    }
  }

  private innerError(err: Error): void {
    if (this.closing) return;
    const cur = this.cur;
    if (!cur) return;
    const line = this.blockLine + this.inner.line - 1;
    const message = err.message.replace(/^\d+:\d+: /, '');
    cur.error ??= {
      code: 'syntax',
      severity: 'error',
      message: `malformed XML at line ${line} inside spectrum ${cur.id ?? cur.index}: ${message}`,
      position: { file: this.file, line, index: cur.index, id: cur.id },
    };
  }

  private strayMessage(): string {
    const more = this.strayCount > 1 ? ` (and ${this.strayCount - 1} more XML errors)` : '';
    return this.stray!.message + more;
  }

  private outerOpen(tag: SaxesTagPlain): void {
    if (this.stopped) return;
    switch (tag.name) {
      case 'cvParam':
        this.group?.push(paramOf(tag.attributes));
        return;
      case 'referenceableParamGroup':
        this.group = [];
        this.groups.set(tag.attributes.id ?? '', this.group);
        return;
      case 'spectrumList': {
        this.listOpen = true;
        this.listSeen = true;
        const n = Number(tag.attributes.count);
        this.listCount = Number.isInteger(n) && n >= 0 ? n : undefined;
        return;
      }
      case 'mzML':
      case 'indexedmzML':
        this.rootSeen = true;
        return;
      default:
        if (!this.rootSeen) this.fatal(`not an mzML document: the root element is <${tag.name}>`, this.line);
    }
  }

  private outerClose(tag: SaxesTagPlain): void {
    switch (tag.name) {
      case 'referenceableParamGroup':
        this.group = undefined;
        return;
      case 'spectrumList':
        this.listOpen = false;
        return;
      case 'mzML':
      case 'indexedmzML':
        this.rootClosed = true;
        return;
    }
  }

  private open(tag: SaxesTagPlain): void {
    const name = tag.name;
    const cur = this.cur;
    if (!cur) {
      if (name === 'spectrum') this.startSpectrum(tag);
      return;
    }
    if (name === 'cvParam') {
      this.param(cur, this.ctx[this.ctx.length - 1]!, paramOf(tag.attributes));
      this.ctx.push('ignore');
      return;
    }
    if (name === 'referenceableParamGroupRef') {
      const ctx = this.ctx[this.ctx.length - 1]!;
      const ref = tag.attributes.ref ?? '';
      const group = this.groups.get(ref);
      if (group) for (const p of group) this.param(cur, ctx, p);
      else this.warn(cur, 'syntax', `referenceableParamGroupRef "${ref}" names no parameter group`);
      this.ctx.push('ignore');
      return;
    }
    if (name === LIFTED_NAME) {
      if (cur.array && this.ctx[this.ctx.length - 1] === 'array')
        cur.array.text = this.binaries[this.nextBinary] ?? '';
      this.nextBinary++;
      this.ctx.push('ignore');
      return;
    }
    if (name === 'spectrum') {
      // A spectrum inside a spectrum: the first one is broken.
      cur.error ??= this.issue(
        cur,
        'syntax',
        `spectrum ${cur.id ?? cur.index} is not closed before the next one`,
      );
      this.finish(cur);
      this.startSpectrum(tag);
      return;
    }
    this.ctx.push(this.child(cur, this.ctx[this.ctx.length - 1]!, name, tag));
  }

  private close(): void {
    const cur = this.cur;
    if (!cur) return;
    const ctx = this.ctx.pop();
    if (ctx === 'array') cur.array = undefined;
    if (this.ctx.length === 0) {
      this.cur = undefined;
      this.finish(cur);
    }
  }

  private startSpectrum(tag: SaxesTagPlain): void {
    const a = tag.attributes;
    const dal = a.defaultArrayLength === undefined ? undefined : Number(a.defaultArrayLength);
    this.stats.spectra++;
    this.cur = {
      index: this.nextIndex++,
      id: a.id || undefined,
      line: this.blockLine + this.inner.line - 1,
      defaultArrayLength: dal !== undefined && Number.isInteger(dal) && dal >= 0 ? dal : undefined,
      msLevel: undefined,
      ms1Term: false,
      polarity: undefined,
      profile: false,
      scans: 0,
      precursors: 0,
      selectedIons: 0,
      mz: undefined,
      charge: undefined,
      possibleCharges: [],
      precursorIntensity: undefined,
      rt: undefined,
      activation: [],
      collisionEnergy: undefined,
      arrays: [],
      array: undefined,
      error: undefined,
      warnings: [],
    };
    if (dal !== undefined && this.cur.defaultArrayLength === undefined) {
      this.cur.error = this.issue(
        this.cur,
        'syntax',
        `defaultArrayLength "${a.defaultArrayLength}" is not a count`,
      );
    }
    this.ctx.length = 0;
    this.ctx.push('spectrum');
  }

  /** The context of a child element, from its parent's. */
  private child(cur: SpectrumState, parent: Ctx, name: string, tag: SaxesTagPlain): Ctx {
    switch (parent) {
      case 'spectrum':
        if (name === 'scanList') return 'scanList';
        if (name === 'precursorList') return 'precursorList';
        if (name === 'binaryDataArrayList') return 'arrays';
        return 'ignore';
      case 'scanList':
        return name === 'scan' && cur.scans++ === 0 ? 'scan' : 'ignore';
      case 'precursorList':
        if (name !== 'precursor') return 'ignore';
        if (cur.precursors++ === 0) return 'precursor';
        if (cur.precursors === 2)
          this.warn(cur, 'multiple-precursors', 'spectrum has several precursors; using the first');
        return 'ignore';
      case 'precursor':
        if (name === 'selectedIonList') return 'selectedIonList';
        if (name === 'activation') return 'activation';
        return 'ignore';
      case 'selectedIonList':
        if (name !== 'selectedIon') return 'ignore';
        if (cur.selectedIons++ === 0) return 'selectedIon';
        if (cur.selectedIons === 2) {
          this.warn(cur, 'multiple-precursors', 'precursor has several selected ions; using the first');
        }
        return 'ignore';
      case 'arrays':
        if (name !== 'binaryDataArray') return 'ignore';
        {
          const len = tag.attributes.arrayLength;
          const n = len === undefined ? undefined : Number(len);
          cur.array = {
            text: '',
            arrayLength: n !== undefined && Number.isInteger(n) && n >= 0 ? n : undefined,
          };
          cur.arrays.push(cur.array);
        }
        return 'array';
      case 'array':
        return name === 'binary' ? 'binary' : 'ignore';
      default:
        return 'ignore';
    }
  }

  /** Applies one cvParam to the spectrum, by where it sits. */
  private param(cur: SpectrumState, ctx: Ctx, p: CvParam): void {
    switch (ctx) {
      case 'spectrum':
      case 'scan':
        switch (p.accession) {
          case CV.msLevel:
            cur.msLevel = Number(p.value);
            return;
          case CV.ms1Spectrum:
            cur.ms1Term = true;
            return;
          case CV.positive:
            cur.polarity = 'positive';
            return;
          case CV.negative:
            cur.polarity = 'negative';
            return;
          case CV.profile:
            cur.profile = true;
            return;
          case CV.scanStartTime:
            if (ctx === 'scan') cur.rt = p;
            return;
        }
        return;
      case 'selectedIon':
        switch (p.accession) {
          case CV.selectedIonMz:
            cur.mz = p.value;
            return;
          case CV.mzUnitAsSelectedIon:
            // Files from before MS:1000744 gave the selected ion's m/z under the "m/z" term.
            cur.mz ??= p.value;
            return;
          case CV.chargeState:
            cur.charge = p.value;
            return;
          case CV.possibleChargeState:
            cur.possibleCharges.push(p.value);
            return;
          case CV.peakIntensity:
            cur.precursorIntensity = p.value;
            return;
        }
        return;
      case 'activation':
        if (p.accession === CV.collisionEnergy) cur.collisionEnergy = p.value;
        else if (p.value === '' && p.name) cur.activation.push(p.name);
        return;
      case 'array': {
        const a = cur.array;
        if (!a) return;
        switch (p.accession) {
          case CV.mzArray:
            a.kind = 'mz';
            return;
          case CV.intensityArray:
            a.kind = 'intensity';
            return;
          case CV.float64:
            a.precision = 64;
            return;
          case CV.float32:
            a.precision = 32;
            return;
          case CV.zlib:
            a.compression = 'zlib';
            return;
          case CV.noCompression:
            a.compression = 'none';
            return;
        }
        const unsupported = UNSUPPORTED[p.accession];
        if (unsupported) a.unsupported ??= `${unsupported} (${p.accession})`;
        return;
      }
      default:
        return;
    }
  }

  private finish(cur: SpectrumState): void {
    const level = cur.msLevel;
    const notMs2 = level !== undefined ? level !== 2 : cur.ms1Term || (cur.precursors === 0 && !cur.error);
    if (notMs2) {
      const key =
        level !== undefined && Number.isInteger(level) ? String(level) : cur.ms1Term ? '1' : 'unknown';
      this.stats.skipped[key] = (this.stats.skipped[key] ?? 0) + 1;
      return;
    }
    if (cur.error) {
      this.emitError(cur.index, cur.id, cur.error);
      return;
    }
    const result = this.build(cur);
    if ('code' in result) {
      this.emitError(cur.index, cur.id, result);
      return;
    }
    if (this.stray) {
      result.warnings.unshift({ ...this.stray, message: this.strayMessage() });
      this.stray = undefined;
      this.strayCount = 0;
    }
    this.stats.read++;
    this.out.push(result);
  }

  private build(cur: SpectrumState): SpectrumItem | ReadIssue {
    const fail = (code: ReadIssueCode, message: string) => this.issue(cur, code, message);
    let id = cur.id;
    if (id === undefined) {
      id = `index-${cur.index}`;
      this.warn(cur, 'missing-id', `spectrum at line ${cur.line} has no id; its id is ${id}`);
    } else if (id.length > MAX_ID_LENGTH)
      return fail('invalid-spectrum', `id is longer than ${MAX_ID_LENGTH} characters`);

    if (cur.precursors === 0) return fail('missing-precursor', 'MS2 spectrum has no precursor');
    if (cur.mz === undefined)
      return fail('missing-precursor', 'precursor has no selected ion m/z (MS:1000744)');
    const mz = parseDecimal(cur.mz);
    if (!(mz > 0 && mz <= MAX_PRECURSOR_MZ)) {
      return fail('bad-precursor', `selected ion m/z "${cur.mz}" is not an m/z in (0, ${MAX_PRECURSOR_MZ}]`);
    }
    const precursor: Spectrum['precursor'] = { mz };
    let chargeText = cur.charge;
    if (chargeText === undefined && cur.possibleCharges.length > 0) {
      chargeText = cur.possibleCharges[0];
      if (cur.possibleCharges.length > 1) {
        this.warn(
          cur,
          'ambiguous-charge',
          `several possible charge states (${cur.possibleCharges.join(', ')}); using ${chargeText}`,
        );
      }
    }
    if (chargeText !== undefined && chargeText !== '') {
      const z0 = parseDecimal(chargeText);
      if (!Number.isInteger(z0) || z0 === 0 || Math.abs(z0) > MAX_CHARGE) {
        return fail('bad-charge', `charge state "${chargeText}" is not a charge in ±1…±${MAX_CHARGE}`);
      }
      const z = z0 < 0 ? z0 : cur.polarity === 'negative' ? -z0 : z0;
      if (cur.polarity !== undefined && z > 0 !== (cur.polarity === 'positive')) {
        return fail('bad-charge', `charge state ${z} contradicts the ${cur.polarity} scan polarity`);
      }
      precursor.charge = z;
    }
    if (cur.precursorIntensity !== undefined && cur.precursorIntensity !== '') {
      const v = parseDecimal(cur.precursorIntensity);
      if (!(v >= 0 && Number.isFinite(v))) {
        return fail(
          'bad-precursor',
          `precursor intensity "${cur.precursorIntensity}" is not a non-negative number`,
        );
      }
      precursor.intensity = v;
    }

    let rt: number | undefined;
    if (cur.rt) {
      const v = parseDecimal(cur.rt.value);
      if (!(v >= 0 && Number.isFinite(v)))
        return fail('bad-value', `scan start time "${cur.rt.value}" is not a non-negative number`);
      const factor = TIME_UNITS[cur.rt.unitAccession];
      if (factor === undefined) {
        this.warn(
          cur,
          'bad-value',
          `scan start time unit "${cur.rt.unitAccession || 'none'}" is not a time unit; no retention time`,
        );
      } else rt = v * factor;
    }

    // Peaks.
    let mzArr: ArrayState | undefined;
    let intArr: ArrayState | undefined;
    for (const a of cur.arrays) {
      if (a.kind === 'mz') mzArr ??= a;
      else if (a.kind === 'intensity') intArr ??= a;
    }
    if (!mzArr || !intArr) return fail('bad-binary', `spectrum has no ${mzArr ? 'intensity' : 'm/z'} array`);
    let mzs: Float64Array | Float32Array;
    let ints: Float64Array | Float32Array;
    for (const a of [mzArr, intArr]) {
      const what = a.kind === 'mz' ? 'm/z' : 'intensity';
      if (a.unsupported) {
        return fail(
          'unsupported-encoding',
          `${what} array uses ${a.unsupported}, which Peel does not decode; convert the file without it`,
        );
      }
      if (a.precision === undefined)
        return fail('bad-binary', `${what} array gives no binary data type (MS:1000521/MS:1000523)`);
    }
    try {
      mzs = decodeBinaryArray(mzArr.text, mzArr.compression ?? 'none', mzArr.precision!);
    } catch (err) {
      return fail('bad-binary', `m/z array: ${(err as Error).message}`);
    }
    try {
      ints = decodeBinaryArray(intArr.text, intArr.compression ?? 'none', intArr.precision!);
    } catch (err) {
      return fail('bad-binary', `intensity array: ${(err as Error).message}`);
    }
    const expectedMz = mzArr.arrayLength ?? cur.defaultArrayLength;
    const expectedInt = intArr.arrayLength ?? cur.defaultArrayLength;
    if (expectedMz !== undefined && mzs.length !== expectedMz) {
      return fail(
        'array-length-mismatch',
        `m/z array holds ${mzs.length} values; defaultArrayLength says ${expectedMz}`,
      );
    }
    if (expectedInt !== undefined && ints.length !== expectedInt) {
      return fail(
        'array-length-mismatch',
        `intensity array holds ${ints.length} values; defaultArrayLength says ${expectedInt}`,
      );
    }
    if (mzs.length !== ints.length) {
      return fail(
        'array-length-mismatch',
        `m/z array holds ${mzs.length} values, intensity array ${ints.length}`,
      );
    }
    const n = mzs.length;
    if (n > MAX_PEAKS) return fail('too-large', `spectrum has ${n} peaks; at most ${MAX_PEAKS} are read`);
    const peaks: Peak[] = new Array(n);
    let k = 0;
    let zero = 0;
    let sorted = true;
    let last = 0;
    for (let i = 0; i < n; i++) {
      const x = mzs[i]!;
      const y = ints[i]!;
      if (!(x >= 0 && x < Number.POSITIVE_INFINITY)) return fail('bad-peak', `peak ${i} has m/z ${x}`);
      if (!(y >= 0 && y < Number.POSITIVE_INFINITY)) return fail('bad-peak', `peak ${i} has intensity ${y}`);
      if (x === 0) {
        zero++;
        continue;
      }
      if (x < last) sorted = false;
      last = x;
      peaks[k++] = [x, y];
    }
    peaks.length = k;
    if (zero > 0) this.warn(cur, 'bad-peak', `${zero} peak(s) at m/z 0 dropped`);
    if (!sorted) {
      peaks.sort((a, b) => a[0] - b[0]);
      this.warn(cur, 'unsorted-peaks', 'peaks were not in m/z order; sorted');
    }
    if (k === 0) this.warn(cur, 'no-peaks', 'MS2 spectrum has no peaks');
    if (cur.profile)
      this.warn(cur, 'profile-data', 'profile (not centroided) spectrum; peaks are read as they are');

    const spectrum: Spectrum = { id, precursor, peaks };
    if (cur.polarity) spectrum.polarity = cur.polarity;
    if (rt !== undefined) spectrum.rt = rt;
    const metadata: SpectrumMetadata = {};
    let hasMetadata = false;
    if (cur.collisionEnergy !== undefined) {
      const e = parseDecimal(cur.collisionEnergy);
      if (Number.isFinite(e)) {
        metadata.collisionEnergy = e;
        hasMetadata = true;
      }
    }
    if (cur.activation.length > 0) {
      metadata.activation = cur.activation.join(', ').slice(0, 2000);
      hasMetadata = true;
    }
    if (hasMetadata) spectrum.metadata = metadata;
    return { kind: 'spectrum', index: cur.index, spectrum, warnings: cur.warnings };
  }

  private issue(cur: SpectrumState, code: ReadIssueCode, message: string): ReadIssue {
    return {
      code,
      severity: 'error',
      message,
      position: { file: this.file, line: cur.line, index: cur.index, id: cur.id },
    };
  }

  private warn(cur: SpectrumState, code: ReadIssueCode, message: string): void {
    cur.warnings.push({
      code,
      severity: 'warning',
      message,
      position: { file: this.file, line: cur.line, index: cur.index, id: cur.id },
    });
  }

  private emitError(index: number, id: string | undefined, issue: ReadIssue): void {
    this.stats.errors++;
    this.out.push(id === undefined ? { kind: 'error', index, issue } : { kind: 'error', index, id, issue });
  }
}

/** Index of the first `<spectrum` start tag in `t` (not `<spectrumList`), or -1. */
function findSpectrumStart(t: string, from: number): number {
  for (let i = t.indexOf(SPECTRUM_OPEN, from); i >= 0; i = t.indexOf(SPECTRUM_OPEN, i + 1)) {
    const c = t.charCodeAt(i + SPECTRUM_OPEN.length);
    // Whitespace, '>' or '/' after the name; NaN (the text ends there) is decided with the next chunk.
    if (c === 32 || c === 9 || c === 10 || c === 13 || c === 62 || c === 47) return i;
  }
  return -1;
}

function countLines(s: string): number {
  let n = 0;
  for (let i = s.indexOf('\n'); i >= 0; i = s.indexOf('\n', i + 1)) n++;
  return n;
}

function paramOf(a: Record<string, string>): CvParam {
  return {
    accession: a.accession ?? '',
    name: a.name ?? '',
    value: a.value ?? '',
    unitAccession: a.unitAccession ?? '',
  };
}
