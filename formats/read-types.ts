import type { Spectrum } from '../engine/spectrum/spectrum.js';

/** Codes of problems a reader finds in its input. */
export type ReadIssueCode =
  | 'truncated'
  | 'syntax'
  | 'missing-precursor'
  | 'bad-precursor'
  | 'bad-charge'
  | 'bad-peak'
  | 'no-peaks'
  | 'unsupported-encoding'
  | 'bad-binary'
  | 'array-length-mismatch'
  | 'duplicate-id'
  | 'invalid-spectrum'
  | 'not-ms2'
  | 'unknown-key'
  | 'missing-id'
  | 'ambiguous-charge'
  | 'unsorted-peaks'
  | 'bad-value'
  | 'profile-data'
  | 'multiple-precursors'
  | 'too-large'
  | 'unknown-format'
  | 'bad-compression';

/** Where in the input a problem sits: a line (text formats) and/or a spectrum index and id. */
export interface ReadPosition {
  file?: string;
  line?: number;
  /** 0-based index of the spectrum in the file (counting every spectrum block, good or bad). */
  index?: number;
  id?: string;
  /** JSON pointer (RFC 6901) into the input document, for JSON input. */
  path?: string;
}

/** One problem found while reading; `severity: 'error'` means the spectrum was skipped. */
export interface ReadIssue {
  code: ReadIssueCode;
  severity: 'error' | 'warning';
  message: string;
  position: ReadPosition;
}

/**
 * What a reader yields, one item per spectrum block: the spectrum (with any warnings), or an error
 * record for a spectrum that could not be read (the reader then goes on with the next one).
 */
export type ReadItem =
  | { kind: 'spectrum'; index: number; spectrum: Spectrum; warnings: ReadIssue[] }
  | { kind: 'error'; index: number; id?: string; issue: ReadIssue };

/** Options every reader takes. */
export interface ReadOptions {
  /** File name used in positions. */
  file?: string;
}
