import type { Writable } from 'node:stream';
import type { CandidateResult, RuleSetRef, SpectrumResult } from '../engine/report/result.js';
import { candidateIonType, decimal, type ResultsWriter, WriterState, writeText } from './results-writer.js';

/** Columns of the CSV, in order (one row per candidate; a spectrum without candidates gets one row). */
export const CSV_COLUMNS = [
  'spectrum_id',
  'spectrum_index',
  'status',
  'reason_code',
  'reason',
  'precursor_mz',
  'charge',
  'ion_type',
  'rank',
  'tied',
  'aglycone',
  'aglycone_formula',
  'aglycone_class',
  'aglycone_alternatives',
  'substituents',
  'topology',
  'other_topologies',
  'formula',
  'ppm',
  'explained_intensity',
  'score',
  'confidence_level',
  'matched_peaks',
  'cautions',
  'ruleset_name',
  'ruleset_version',
  'ruleset_sha256',
] as const;

/** Options of {@link createCsvWriter}. */
export interface CsvWriterOptions {
  /** Field separator. @defaultValue `,` */
  separator?: ',' | ';' | '\t';
  /** Prefix text cells that a spreadsheet would run as a formula with `'`. @defaultValue true */
  guardFormulas?: boolean;
}

type Cell = string | number | boolean | undefined | null;

/**
 * Writes RFC 4180 CSV: CRLF line ends, a header row, cells quoted when they hold the separator, a quote,
 * CR or LF, quotes doubled. Text cells that start with `=`, `+`, `-`, `@`, TAB or CR are prefixed with
 * `'` so a spreadsheet shows them instead of running them (CSV formula injection, OWASP); numbers are
 * never altered, so a negative ppm stays a number. Lists inside a cell are joined with `;`.
 */
export function createCsvWriter(out: Writable, options: CsvWriterOptions = {}): ResultsWriter {
  const state = new WriterState();
  const sep = options.separator ?? ',';
  const guard = options.guardFormulas ?? true;
  let ref: RuleSetRef | undefined;

  const cell = (v: Cell): string => {
    if (v === undefined || v === null) return '';
    if (typeof v === 'number') return Number.isFinite(v) ? decimal(v, 6) : '';
    if (typeof v === 'boolean') return v ? 'true' : 'false';
    let s = v;
    if (guard && /^[=+\-@\t\r]/.test(s)) s = `'${s}`;
    return s.includes(sep) || /["\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
  };
  const row = (cells: Cell[]) => cells.map(cell).join(sep) + '\r\n';

  return {
    format: 'csv',
    contentType: 'text/csv; charset=utf-8; header=present',
    async begin(ruleset: RuleSetRef) {
      state.begin();
      ref = ruleset;
      await writeText(out, CSV_COLUMNS.join(sep) + '\r\n');
    },
    async write(result: SpectrumResult) {
      state.write();
      const common = (c?: CandidateResult): Cell[] => [
        result.id,
        result.index,
        result.status,
        result.reason?.code,
        result.reason?.message,
        round(result.precursor?.mz, 6),
        result.precursor?.charge,
        c ? candidateIonType(c, result) : (result.precursor?.ionType ?? undefined),
        c?.rank,
        c ? Boolean(c.tiedWithPrevious) : undefined,
        c?.aglycone.name,
        c?.aglycone.formula,
        c?.aglycone.class,
        c?.aglycone.alternatives.join(';'),
        c?.substituents.map((s) => `${s.residue}(${s.linkage})`).join(';'),
        c?.topology,
        c?.otherTopologies?.map((o) => o.topology).join(';'),
        c?.formula,
        round(c?.ppm, 3),
        round(c?.explainedIntensity, 4),
        round(c?.score, 4),
        c?.confidenceLevel,
        c?.matchedPeaks.length,
        result.cautions.join(';'),
        ref!.name,
        ref!.version,
        ref!.sha256,
      ];
      const rows =
        result.candidates.length === 0 ? [row(common())] : result.candidates.map((c) => row(common(c)));
      await writeText(out, rows.join(''));
    },
    async end() {
      state.end();
    },
    async abort() {
      state.abort();
    },
  };
}

function round(n: number | undefined, digits: number): number | undefined {
  return n === undefined ? undefined : Number(n.toFixed(digits));
}
