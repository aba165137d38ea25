import type { Writable } from 'node:stream';
import { DISCLAIMER, type RuleSetRef, type SpectrumResult } from '../engine/report/result.js';
import { type ResultsWriter, WriterState, writeText } from './results-writer.js';

/** Options of {@link createJsonWriter}. */
export interface JsonWriterOptions {
  /** Text of the document's `disclaimer`. @defaultValue {@link DISCLAIMER} */
  disclaimer?: string;
  /** Indent each spectrum on its own lines (two spaces) instead of one compact line. @defaultValue false */
  pretty?: boolean;
}

/**
 * Writes a results document (`{ ruleset, disclaimer, spectra: [...] }`, the contract of DESIGN.md and
 * `ResultsDocumentSchema`) one spectrum at a time: memory stays flat however many spectra there are, and
 * the output is valid JSON once `end()` has run.
 */
export function createJsonWriter(out: Writable, options: JsonWriterOptions = {}): ResultsWriter {
  const state = new WriterState();
  const disclaimer = options.disclaimer ?? DISCLAIMER;
  const indent = options.pretty ? 2 : undefined;
  let count = 0;
  return {
    format: 'json',
    contentType: 'application/json; charset=utf-8',
    async begin(ruleset: RuleSetRef) {
      state.begin();
      const head = {
        ruleset: { name: ruleset.name, version: ruleset.version, sha256: ruleset.sha256 },
        disclaimer,
      };
      const text = JSON.stringify(head, null, indent);
      // Open the spectra array inside the head object: drop its closing brace.
      await writeText(
        out,
        `${text.slice(0, text.lastIndexOf('}')).trimEnd()},${indent ? '\n  ' : ''}"spectra":[`,
      );
    },
    async write(result: SpectrumResult) {
      state.write();
      let body = JSON.stringify(result, null, indent);
      if (indent) body = body.replace(/\n/g, '\n    ');
      await writeText(out, `${count === 0 ? '' : ','}\n${indent ? '    ' : ''}${body}`);
      count++;
    },
    async end() {
      state.end();
      await writeText(out, count === 0 ? ']}\n' : `\n${indent ? '  ' : ''}]\n}\n`);
    },
    async abort() {
      state.abort();
    },
  };
}
