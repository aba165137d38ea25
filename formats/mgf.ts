import type { Peak, Spectrum, SpectrumMetadata } from '../engine/spectrum/spectrum.js';
import { parseDecimal, peaksSorted, sortPeaks } from './peaks.js';
import type { ReadIssue, ReadIssueCode, ReadItem, ReadOptions } from './read-types.js';
import { LineSplitter, type ReadSource, sourceChunks } from './source.js';

/** Options of {@link readMgf}. */
export interface MgfReadOptions extends ReadOptions {
  /**
   * Longest line kept; a longer one is reported as a syntax problem without being buffered.
   * @defaultValue 1 MiB
   */
  maxLineLength?: number;
}

/** Largest |charge| accepted; beyond it a charge is an input error, not chemistry. */
const MAX_CHARGE = 10;
/** Largest precursor m/z the spectrum schema accepts. */
const MAX_PRECURSOR_MZ = 20000;
const MAX_ID_LENGTH = 256;
const MAX_METADATA_LENGTH = 2000;
/** Largest peak list the spectrum schema accepts. */
const MAX_PEAKS = 200000;
/** Keys that set the polarity of a block (compared upper-case). */
const POLARITY_KEYS = new Set(['POLARITY', 'ION_MODE', 'IONMODE', 'ION MODE', 'SCAN_POLARITY']);
/** Keys that may not become metadata property names. */
const UNSAFE_KEYS = new Set(['__PROTO__', 'CONSTRUCTOR', 'PROTOTYPE']);
const KEY_VALUE = /^([A-Za-z_][A-Za-z0-9_ .-]*?)\s*=(.*)$/;
const CHARGE_PART = /^([+-]?)(\d+)([+-]?)$/;

interface Param {
  key: string;
  upper: string;
  value: string;
  line: number;
}

interface Block {
  index: number;
  line: number;
  params: Param[];
  peaks: Peak[];
  /** First problem that makes the block unreadable. */
  error?: ReadIssue;
  warnings: ReadIssue[];
  zeroMz: number;
}

/**
 * Reads MGF peak lists (the plain-text format most converters write), line by line, without buffering the file.
 *
 * One item per `BEGIN IONS`…`END IONS` block, in file order. `TITLE` becomes the id (a block without one gets
 * `index-N` and a `missing-id` warning); `PEPMASS` the precursor m/z and optional intensity; `CHARGE` the
 * signed charge (`2+`, `2-`, `+2`, `-1`; `2+ and 3+` takes the first with an `ambiguous-charge` warning);
 * `RTINSECONDS` the retention time; a `POLARITY`/`ION_MODE` key the polarity; `SCANS` and every other
 * `KEY=VALUE` stay as string metadata (`lambdaMaxNm` and `compoundClass`, any case, keep their typed meaning).
 * Parameters before the first block apply to every block (except `TITLE`); a block's own value wins.
 * Comment lines (`#`, `;`, `!`, `/`) and blank lines are skipped; CRLF is fine.
 *
 * Bad input never stops the reader: a block with a garbage line, a non-numeric, non-finite or negative value, no
 * precursor, a charge of 0 or beyond ±10, a nested `BEGIN IONS` or no `END IONS` yields one error item with
 * the line number. Unsorted peaks are sorted (warning); peaks at m/z 0 are dropped (warning); a block with
 * no peaks is still yielded, with a `no-peaks` warning, so its id is reported downstream. Stray lines
 * between blocks become warnings on the next spectrum (or one error item if no block follows).
 */
export async function* readMgf(source: ReadSource, options: MgfReadOptions = {}): AsyncGenerator<ReadItem> {
  const parser = new MgfParser(options.file);
  const splitter = new LineSplitter(
    (text, line, tooLong) => parser.line(text, line, tooLong),
    options.maxLineLength,
  );
  for await (const chunk of sourceChunks(source)) {
    splitter.push(chunk);
    if (parser.out.length > 0) yield* parser.drain();
  }
  splitter.end();
  parser.end(splitter.lines);
  yield* parser.drain();
}

class MgfParser {
  out: ReadItem[] = [];
  private readonly globals: Param[] = [];
  private block: Block | undefined;
  private blocks = 0;
  private seenBlock = false;
  /** Problems found between blocks, reported on the next spectrum. */
  private stray: ReadIssue[] = [];
  private strayCount = 0;

  constructor(private readonly file: string | undefined) {}

  drain(): ReadItem[] {
    const items = this.out;
    this.out = [];
    return items;
  }

  line(raw: string, line: number, tooLong: boolean): void {
    const block = this.block;
    if (tooLong) {
      if (block) this.fail(block, 'syntax', line, `line ${line} is longer than the line limit`);
      else this.addStray(line, `line ${line} is longer than the line limit`);
      return;
    }
    const text = raw.trim();
    if (text.length === 0) return;
    const c = text.charCodeAt(0);
    // # ; ! / start comment lines.
    if (c === 35 || c === 59 || c === 33 || c === 47) return;
    const upper = text.length <= 12 ? text.toUpperCase() : '';
    if (upper === 'BEGIN IONS') {
      if (block) {
        this.fail(
          block,
          'syntax',
          line,
          `BEGIN IONS at line ${line} inside the block opened at line ${block.line}`,
        );
        this.finish(block);
      }
      this.seenBlock = true;
      this.block = { index: this.blocks++, line, params: [], peaks: [], warnings: [], zeroMz: 0 };
      return;
    }
    if (upper === 'END IONS') {
      if (block) {
        this.finish(block);
        this.block = undefined;
      } else this.addStray(line, `END IONS at line ${line} without BEGIN IONS`);
      return;
    }
    if (block) {
      if (block.error) return;
      if (
        (c >= 48 && c <= 57) ||
        c === 46 ||
        c === 43 ||
        c === 45 ||
        c === 78 ||
        c === 110 ||
        c === 73 ||
        c === 105
      ) {
        if (this.peak(block, text, line)) return;
      }
      const kv = KEY_VALUE.exec(text);
      if (kv) {
        const key = kv[1]!.trim();
        block.params.push({ key, upper: key.toUpperCase(), value: kv[2]!.trim(), line });
        return;
      }
      this.fail(block, 'syntax', line, `line ${line} is neither KEY=VALUE nor a peak: "${clip(text)}"`);
      return;
    }
    const kv = KEY_VALUE.exec(text);
    if (kv && !this.seenBlock) {
      const key = kv[1]!.trim();
      this.globals.push({ key, upper: key.toUpperCase(), value: kv[2]!.trim(), line });
      return;
    }
    this.addStray(line, `line ${line} outside any BEGIN IONS block: "${clip(text)}"`);
  }

  end(lastLine: number): void {
    if (this.block) {
      const b = this.block;
      // Truncation wins: the last line was probably cut, so a problem found on it says little.
      const also = b.error && b.error.position.line !== lastLine ? `; also: ${b.error.message}` : '';
      b.error = {
        code: 'truncated',
        severity: 'error',
        message: `file ends at line ${lastLine} inside the block opened at line ${b.line} (no END IONS)${also}`,
        position: { file: this.file, line: lastLine, index: b.index },
      };
      this.finish(b);
      this.block = undefined;
    }
    if (this.stray.length > 0) {
      const first = this.stray[0]!;
      const more = this.strayCount > 1 ? ` (and ${this.strayCount - 1} more such lines)` : '';
      this.out.push({
        kind: 'error',
        index: this.blocks,
        issue: { ...first, severity: 'error', message: first.message + more },
      });
      this.stray = [];
    }
  }

  /** Parses a peak line; false when the line is not shaped like one (then it may be KEY=VALUE). */
  private peak(block: Block, text: string, line: number): boolean {
    if (text.includes('=')) return false;
    const parts = text.split(/\s+/);
    if (parts.length < 2 || parts.length > 3) {
      if (parts.length === 1 && parseDecimal(parts[0]!) >= 0) {
        this.fail(block, 'bad-peak', line, `peak at line ${line} has no intensity`);
        return true;
      }
      return false;
    }
    const mz = parseDecimal(parts[0]!);
    const intensity = parseDecimal(parts[1]!);
    if (Number.isNaN(mz) && Number.isNaN(intensity) && !/^[+-]?(nan|inf)/i.test(parts[0]!)) return false;
    if (!Number.isFinite(mz) || mz < 0) {
      this.fail(
        block,
        'bad-peak',
        line,
        `peak m/z "${clip(parts[0]!)}" at line ${line} is not a non-negative number`,
      );
    } else if (!Number.isFinite(intensity) || intensity < 0) {
      this.fail(
        block,
        'bad-peak',
        line,
        `peak intensity "${clip(parts[1]!)}" at line ${line} is not a non-negative number`,
      );
    } else if (mz === 0) {
      block.zeroMz++;
    } else if (block.peaks.length >= MAX_PEAKS) {
      this.fail(block, 'too-large', line, `block has more than ${MAX_PEAKS} peaks (line ${line})`);
    } else {
      block.peaks.push([mz, intensity]);
    }
    return true;
  }

  private fail(block: Block, code: ReadIssueCode, line: number, message: string): void {
    block.error ??= {
      code,
      severity: 'error',
      message,
      position: { file: this.file, line, index: block.index },
    };
  }

  private addStray(line: number, message: string): void {
    this.strayCount++;
    if (this.stray.length === 0) {
      this.stray.push({ code: 'syntax', severity: 'warning', message, position: { file: this.file, line } });
    }
  }

  private finish(block: Block): void {
    const item = this.build(block);
    if (this.stray.length > 0) {
      const first = this.stray[0]!;
      const more = this.strayCount > 1 ? ` (and ${this.strayCount - 1} more such lines)` : '';
      const w = { ...first, message: first.message + more };
      if (item.kind === 'spectrum') item.warnings.unshift(w);
      this.stray = [];
      this.strayCount = 0;
    }
    this.out.push(item);
  }

  private build(block: Block): ReadItem {
    const index = block.index;
    const params = this.merged(block);
    const titleParam = params.get('TITLE');
    const id = titleParam?.value;
    if (block.error) return { kind: 'error', index, id: id || undefined, issue: withId(block.error, id) };
    const file = this.file;
    const warnings = block.warnings;
    const at = (p: Param | undefined) => ({ file, line: p?.line ?? block.line, index, id: id || undefined });
    const error = (code: ReadIssueCode, p: Param | undefined, message: string): ReadItem => ({
      kind: 'error',
      index,
      id: id || undefined,
      issue: { code, severity: 'error', message, position: at(p) },
    });
    const warn = (code: ReadIssueCode, p: Param | undefined, message: string) =>
      warnings.push({ code, severity: 'warning', message, position: at(p) });

    let spectrumId: string;
    if (!id) {
      spectrumId = `index-${index}`;
      warn('missing-id', undefined, `block at line ${block.line} has no TITLE; its id is ${spectrumId}`);
    } else if (id.length > MAX_ID_LENGTH) {
      return error('invalid-spectrum', titleParam, `TITLE is longer than ${MAX_ID_LENGTH} characters`);
    } else spectrumId = id;

    const level = params.get('MSLEVEL');
    if (level && level.value !== '2') {
      return error(
        'not-ms2',
        level,
        `MSLEVEL=${clip(level.value)} at line ${level.line}: only MS2 spectra are scored`,
      );
    }

    const pepmass = params.get('PEPMASS');
    if (!pepmass || pepmass.value === '') {
      return error(
        'missing-precursor',
        pepmass,
        `block at line ${block.line} has no PEPMASS (precursor m/z)`,
      );
    }
    const pm = pepmass.value.split(/\s+/);
    const mz = parseDecimal(pm[0]!);
    if (!(mz > 0 && mz <= MAX_PRECURSOR_MZ)) {
      return error(
        'bad-precursor',
        pepmass,
        `PEPMASS "${clip(pm[0]!)}" at line ${pepmass.line} is not an m/z in (0, ${MAX_PRECURSOR_MZ}]`,
      );
    }
    const precursor: Spectrum['precursor'] = { mz };
    if (pm.length > 1) {
      const intensity = parseDecimal(pm[1]!);
      if (!(intensity >= 0 && Number.isFinite(intensity))) {
        return error(
          'bad-precursor',
          pepmass,
          `PEPMASS intensity "${clip(pm[1]!)}" at line ${pepmass.line} is not a non-negative number`,
        );
      }
      precursor.intensity = intensity;
    }

    let polarity: Spectrum['polarity'];
    const metadata: SpectrumMetadata = {};
    let hasMetadata = false;
    for (const p of params.values()) {
      if (!POLARITY_KEYS.has(p.upper)) continue;
      const v = p.value.toLowerCase();
      if (v === 'positive' || v === 'pos' || v === '+' || v === 'p') polarity = 'positive';
      else if (v === 'negative' || v === 'neg' || v === '-' || v === 'n') polarity = 'negative';
      else warn('bad-value', p, `${p.key}=${clip(p.value)} at line ${p.line} is not a polarity; ignored`);
    }

    const chargeParam = params.get('CHARGE');
    if (chargeParam && chargeParam.value !== '') {
      const parts = chargeParam.value.split(/\s+and\s+|\s*,\s*|\s+/i).filter((s) => s.length > 0);
      const m = CHARGE_PART.exec(parts[0] ?? '');
      if (!m || (m[1] && m[3])) {
        return error(
          'bad-charge',
          chargeParam,
          `CHARGE "${clip(chargeParam.value)}" at line ${chargeParam.line} is not a charge`,
        );
      }
      const sign = m[1] || m[3] || (polarity === 'negative' ? '-' : '+');
      const z = Number(m[2]) * (sign === '-' ? -1 : 1);
      if (z === 0 || Math.abs(z) > MAX_CHARGE) {
        return error(
          'bad-charge',
          chargeParam,
          `CHARGE ${z} at line ${chargeParam.line} is outside ±1…±${MAX_CHARGE}`,
        );
      }
      if (polarity !== undefined && z > 0 !== (polarity === 'positive')) {
        return error(
          'bad-charge',
          chargeParam,
          `CHARGE ${z} at line ${chargeParam.line} contradicts polarity ${polarity}`,
        );
      }
      if (parts.length > 1) {
        warn(
          'ambiguous-charge',
          chargeParam,
          `CHARGE "${clip(chargeParam.value)}" lists several charges; using ${z}`,
        );
      }
      precursor.charge = z;
    }

    const spectrum: Spectrum = { id: spectrumId, precursor, peaks: block.peaks };
    if (polarity) spectrum.polarity = polarity;

    const rt = params.get('RTINSECONDS');
    if (rt && rt.value !== '') {
      const v = parseDecimal(rt.value);
      if (!(v >= 0 && Number.isFinite(v))) {
        return error(
          'bad-value',
          rt,
          `RTINSECONDS "${clip(rt.value)}" at line ${rt.line} is not a non-negative number`,
        );
      }
      spectrum.rt = v;
    }

    for (const p of params.values()) {
      switch (p.upper) {
        case 'TITLE':
        case 'PEPMASS':
        case 'CHARGE':
        case 'RTINSECONDS':
        case 'MSLEVEL':
          continue;
        case 'LAMBDAMAXNM': {
          const v = parseDecimal(p.value);
          if (v > 0 && Number.isFinite(v)) {
            metadata.lambdaMaxNm = v;
            hasMetadata = true;
          } else
            warn(
              'bad-value',
              p,
              `${p.key}=${clip(p.value)} at line ${p.line} is not a wavelength in nm; ignored`,
            );
          continue;
        }
        case 'COMPOUNDCLASS':
          if (p.value.length >= 1 && p.value.length <= 100) {
            metadata.compoundClass = p.value;
            hasMetadata = true;
          } else warn('bad-value', p, `${p.key} at line ${p.line} must be 1–100 characters; ignored`);
          continue;
      }
      if (POLARITY_KEYS.has(p.upper)) continue;
      if (UNSAFE_KEYS.has(p.upper)) {
        warn('unknown-key', p, `key ${p.key} at line ${p.line} cannot be kept as metadata`);
        continue;
      }
      const key = p.upper === 'SCANS' ? 'scans' : p.key;
      if (p.value.length > MAX_METADATA_LENGTH) {
        warn(
          'bad-value',
          p,
          `${p.key} at line ${p.line} is longer than ${MAX_METADATA_LENGTH} characters; dropped`,
        );
        continue;
      }
      metadata[key] = p.value;
      hasMetadata = true;
    }
    if (hasMetadata) spectrum.metadata = metadata;

    if (block.zeroMz > 0) {
      warn('bad-peak', undefined, `${block.zeroMz} peak(s) at m/z 0 dropped`);
    }
    if (!peaksSorted(block.peaks)) {
      sortPeaks(block.peaks);
      warn('unsorted-peaks', undefined, `peaks of block at line ${block.line} were not in m/z order; sorted`);
    }
    if (block.peaks.length === 0) warn('no-peaks', undefined, `block at line ${block.line} has no peaks`);
    return { kind: 'spectrum', index, spectrum, warnings };
  }

  /** The block's parameters over the global ones (by upper-case key; the last occurrence wins). */
  private merged(block: Block): Map<string, Param> {
    const m = new Map<string, Param>();
    for (const p of this.globals) if (p.upper !== 'TITLE') m.set(p.upper, p);
    for (const p of block.params) m.set(p.upper, p);
    return m;
  }
}

function withId(issue: ReadIssue, id: string | undefined): ReadIssue {
  return id ? { ...issue, position: { ...issue.position, id } } : issue;
}

function clip(s: string): string {
  return s.length > 60 ? `${s.slice(0, 57)}…` : s;
}
