import type { Writable } from 'node:stream';
import { DISCLAIMER, type RuleSetRef, type SpectrumResult } from '../engine/report/result.js';
import { type ResultsWriter, WriterState, writeText } from './results-writer.js';

/** Version of the NDJSON layout below; bumped if a line's meaning ever changes. */
export const NDJSON_LAYOUT_VERSION = 1;

/** Options of {@link createNdjsonWriter}. */
export interface NdjsonWriterOptions {
  /** Text of the header's `disclaimer`. @defaultValue {@link DISCLAIMER} */
  disclaimer?: string;
}

/**
 * Writes newline-delimited JSON (one JSON object per line, `\n` endings):
 *
 * 1. a header: `{"type":"header","layout":1,"ruleset":{"name","version","sha256"},"disclaimer":"…"}`;
 * 2. one line per spectrum: `{"type":"spectrum", …the SpectrumResult's fields…}` (the line parses as a
 *    `SpectrumResult`; `type` is the only extra key);
 * 3. a footer: `{"type":"footer","spectra":N}`, so a reader can tell a complete stream from a cut one.
 */
export function createNdjsonWriter(out: Writable, options: NdjsonWriterOptions = {}): ResultsWriter {
  const state = new WriterState();
  const disclaimer = options.disclaimer ?? DISCLAIMER;
  let count = 0;
  return {
    format: 'ndjson',
    contentType: 'application/x-ndjson; charset=utf-8',
    async begin(ruleset: RuleSetRef) {
      state.begin();
      const header = {
        type: 'header',
        layout: NDJSON_LAYOUT_VERSION,
        ruleset: { name: ruleset.name, version: ruleset.version, sha256: ruleset.sha256 },
        disclaimer,
      };
      await writeText(out, JSON.stringify(header) + '\n');
    },
    async write(result: SpectrumResult) {
      state.write();
      await writeText(out, JSON.stringify({ type: 'spectrum', ...result }) + '\n');
      count++;
    },
    async end() {
      state.end();
      await writeText(out, JSON.stringify({ type: 'footer', spectra: count }) + '\n');
    },
    async abort() {
      state.abort();
    },
  };
}
