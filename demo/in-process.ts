import { basename } from 'node:path';
import { Writable } from 'node:stream';
import { pathToFileURL } from 'node:url';
import {
  DISCLAIMER,
  type ResultsDocument,
  type RuleSetRef,
  type SpectrumResult,
} from '../engine/report/result.js';
import type { RuleSet } from '../engine/rules/schema.js';
import { compileRuleSet, scoreSpectrum } from '../engine/index.js';
import { createResultsWriter, type ResultsWriter, readSpectraFile } from '../formats/index.js';
import { peelVersion } from '../formats/package-root.js';
import type { DemoProgress } from './progress.js';
import { DemoError } from './service-mode.js';

/** A stream that keeps what is written to it as text. */
class TextSink extends Writable {
  private readonly chunks: string[] = [];
  override _write(chunk: Buffer | string, _enc: BufferEncoding, cb: (err?: Error | null) => void): void {
    this.chunks.push(typeof chunk === 'string' ? chunk : chunk.toString('utf8'));
    cb();
  }
  text(): string {
    return this.chunks.join('');
  }
}

/** Options of {@link scoreInProcess}. */
export interface InProcessOptions {
  files: readonly string[];
  rules: RuleSet;
  ruleset: RuleSetRef;
  /** Spectra in the files (for the progress bar). */
  total: number;
  progress: DemoProgress;
  signal?: AbortSignal;
}

/** What in-process scoring produced: the three results files as text and the document. */
export interface InProcessResult {
  document: ResultsDocument;
  texts: { json: string; csv: string; mztab: string };
}

/**
 * Scores the files in this process with the engine, spectrum by spectrum as `peel score` does, and writes JSON, CSV and mzTab-M
 * with the same writers the service uses, in one pass.
 */
export async function scoreInProcess(o: InProcessOptions): Promise<InProcessResult> {
  const sinks = { json: new TextSink(), csv: new TextSink(), mztab: new TextSink() };
  let run = 0;
  const writers: ResultsWriter[] = [
    createResultsWriter('json', sinks.json),
    createResultsWriter('csv', sinks.csv),
    createResultsWriter('mztab', sinks.mztab, {
      softwareVersion: peelVersion(),
      aglycones: o.rules.aglycones.map((a) => ({ name: a.name, formula: a.formula })),
      msRuns: o.files.map((f) => ({
        location: pathToFileURL(f).href,
        name: basename(f),
        format: 'mgf' as const,
      })),
      msRunOf: () => run + 1,
    }),
  ];
  const results: SpectrumResult[] = [];
  // One writer in front of the three: keeps each result for the summary and stops on Ctrl-C.
  const tee: ResultsWriter = {
    format: 'json',
    contentType: 'application/json',
    async begin(ref) {
      for (const w of writers) await w.begin(ref);
    },
    async write(result) {
      if (o.signal?.aborted) throw new DemoError('stopped', 'aborted');
      results.push(result);
      for (const w of writers) await w.write(result);
    },
    async end() {
      for (const w of writers) await w.end();
    },
    async abort() {
      for (const w of writers) await w.abort();
    },
  };
  try {
    await tee.begin(o.ruleset);
    const compiled = compileRuleSet(o.rules);
    const counts = { done: 0, annotated: 0, unassigned: 0, errors: 0 };
    for (let f = 0; f < o.files.length; f++) {
      run = f;
      for await (const item of readSpectraFile(o.files[f]!)) {
        const index = counts.done;
        let result: SpectrumResult;
        if (item.kind === 'error') {
          // A block the reader could not read is an error result, as in `peel score` and the service.
          result = {
            id: item.id ?? item.issue.position.id ?? `index-${index}`,
            index,
            status: 'error',
            reason: { code: item.issue.code, message: `${item.issue.message} (${basename(o.files[f]!)})` },
            candidates: [],
            cautions: [],
          };
        } else {
          const { id, ...rest } = scoreSpectrum(item.spectrum, compiled);
          result = { id, index, ...rest };
        }
        counts.done++;
        if (result.status === 'annotated') counts.annotated++;
        else if (result.status === 'unassigned') counts.unassigned++;
        else counts.errors++;
        await tee.write(result);
        o.progress.update({ ...counts, total: o.total });
      }
    }
    await tee.end();
  } catch (err) {
    await tee.abort().catch(() => {});
    throw err;
  } finally {
    o.progress.clear();
  }
  return {
    document: { ruleset: o.ruleset, disclaimer: DISCLAIMER, spectra: results },
    texts: { json: sinks.json.text(), csv: sinks.csv.text(), mztab: sinks.mztab.text() },
  };
}
