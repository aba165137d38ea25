import type { Writable } from 'node:stream';
import type { CandidateResult, RuleSetRef, SpectrumResult } from '../engine/report/result.js';

/** The result formats Peel writes. */
export type ResultsFormat = 'json' | 'ndjson' | 'csv' | 'mztab';

/** Every result format this module writes, for option parsing. */
export const RESULTS_FORMATS: readonly ResultsFormat[] = ['json', 'ndjson', 'csv', 'mztab'];

/**
 * A streaming results writer: `begin` once, `write` once per spectrum (in any number), `end` once.
 * Each call resolves when its text has been handed to the stream without overfilling it (backpressure is
 * respected). `end` does not end the stream: the caller owns it (stdout, a file, an HTTP response).
 */
export interface ResultsWriter {
  readonly format: ResultsFormat;
  /** Media type of what it writes, for HTTP responses. */
  readonly contentType: string;
  begin(ruleset: RuleSetRef): Promise<void>;
  write(result: SpectrumResult): Promise<void>;
  end(): Promise<void>;
  /** Gives up: releases anything held (temporary files) without finishing the output. */
  abort(): Promise<void>;
}

/** A writer used out of order (write before begin, anything after end). */
export class WriterStateError extends Error {
  override readonly name = 'WriterStateError';
  readonly code = 'writer-state';
}

/** Writes text to a stream, waiting for `drain` when its buffer is full; rejects if the stream fails. */
export function writeText(out: Writable, text: string): Promise<void> {
  if (text.length === 0) return Promise.resolve();
  if (out.destroyed || out.writableEnded) {
    return Promise.reject(new WriterStateError('the output stream is already closed'));
  }
  if (out.write(text)) return Promise.resolve();
  return new Promise<void>((resolve, reject) => {
    const cleanup = () => {
      out.off('drain', onDrain);
      out.off('error', onError);
      out.off('close', onClose);
    };
    const onDrain = () => {
      cleanup();
      resolve();
    };
    const onError = (err: Error) => {
      cleanup();
      reject(err);
    };
    const onClose = () => {
      cleanup();
      reject(new WriterStateError('the output stream closed before it drained'));
    };
    out.on('drain', onDrain);
    out.on('error', onError);
    out.on('close', onClose);
  });
}

/** Tracks begin → write* → end and refuses calls out of that order. */
export class WriterState {
  private state: 'new' | 'open' | 'done' = 'new';
  begin(): void {
    if (this.state !== 'new') throw new WriterStateError('begin() called twice');
    this.state = 'open';
  }
  write(): void {
    if (this.state !== 'open')
      throw new WriterStateError(`write() called ${this.state === 'new' ? 'before begin()' : 'after end()'}`);
  }
  end(): void {
    if (this.state !== 'open')
      throw new WriterStateError(`end() called ${this.state === 'new' ? 'before begin()' : 'twice'}`);
    this.state = 'done';
  }
  abort(): void {
    this.state = 'done';
  }
}

/**
 * A decimal number as text without exponent (`0.0000001`, never `1e-7`: mzTab-M requires xs:decimal and
 * spreadsheets misread exponents), rounded to `digits` places with trailing zeros dropped.
 */
export function decimal(n: number, digits: number): string {
  if (!Number.isFinite(n)) return Number.isNaN(n) ? 'NaN' : n > 0 ? 'INF' : '-INF';
  let s = n.toFixed(digits);
  if (s.includes('.')) s = s.replace(/0+$/, '').replace(/\.$/, '');
  return s === '-0' ? '0' : s;
}

/**
 * The ion type of a candidate: its own `ionType` when the result carries one (candidates of one spectrum
 * may read the precursor as different ions, e.g. cyanidin glycoside [M]+ against kaempferol glycoside
 * [M+H]+), else the precursor's.
 */
export function candidateIonType(c: CandidateResult, result: SpectrumResult): string | undefined {
  const own = 'ionType' in c ? (c as { ionType?: unknown }).ionType : undefined;
  if (typeof own === 'string' && own.length > 0) return own;
  return result.precursor?.ionType ?? undefined;
}
