import type { Writable } from 'node:stream';
import type { ResultsFormat, ResultsWriter } from './results-writer.js';
import { type CsvWriterOptions, createCsvWriter } from './write-csv.js';
import { createJsonWriter, type JsonWriterOptions } from './write-json.js';
import { type MzTabWriterOptions, createMzTabWriter } from './write-mztab.js';
import { createNdjsonWriter, type NdjsonWriterOptions } from './write-ndjson.js';

/** Options of every writer together; each writer reads its own. */
export type ResultsWriterOptions = JsonWriterOptions &
  NdjsonWriterOptions &
  CsvWriterOptions &
  MzTabWriterOptions;

/** The writer of a format over a stream. */
export function createResultsWriter(
  format: ResultsFormat,
  out: Writable,
  options: ResultsWriterOptions = {},
): ResultsWriter {
  switch (format) {
    case 'json':
      return createJsonWriter(out, options);
    case 'ndjson':
      return createNdjsonWriter(out, options);
    case 'csv':
      return createCsvWriter(out, options);
    case 'mztab':
      return createMzTabWriter(out, options);
  }
}
