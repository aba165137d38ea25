// The formats room: spectrum readers (MGF, mzML, JSON) and, later, result writers. Named exports only.

export type { SpectrumFormat, ReadSpectraOptions } from './detect.js';
export { formatFromName, isGzip, readSpectra, readSpectraFile, sniffFormat } from './detect.js';
export type { JsonReadOptions } from './json-input.js';
export { readJsonSpectra } from './json-input.js';
export type { MgfReadOptions } from './mgf.js';
export { readMgf } from './mgf.js';
export type { MzmlReadOptions, MzmlReadStats } from './mzml.js';
export { createMzmlStats, readMzml } from './mzml.js';
export type { BinaryCompression, BinaryPrecision } from './mzml-binary.js';
export { BinaryDecodeError, decodeBinaryArray, encodeBinaryArray } from './mzml-binary.js';
export type { ReadIssue, ReadIssueCode, ReadItem, ReadOptions, ReadPosition } from './read-types.js';
export type { ReadSource } from './source.js';

// Writers (JSON, NDJSON, CSV, mzTab-M) are exported below this line.
export type { ResultsFormat, ResultsWriter } from './results-writer.js';
export { RESULTS_FORMATS, WriterStateError } from './results-writer.js';
export type { RuleSetFile } from './ruleset-file.js';
export {
  defaultRuleSetPath,
  loadDefaultRuleSet,
  loadRuleSetFile,
  ruleSetRef,
  ruleSetSha256,
} from './ruleset-file.js';
export type { CsvWriterOptions } from './write-csv.js';
export { CSV_COLUMNS, createCsvWriter } from './write-csv.js';
export type { JsonWriterOptions } from './write-json.js';
export { createJsonWriter } from './write-json.js';
export type { MzTabMsRun, MzTabWriterOptions } from './write-mztab.js';
export { createMzTabWriter, MZTAB_VERSION } from './write-mztab.js';
export type { NdjsonWriterOptions } from './write-ndjson.js';
export { createNdjsonWriter } from './write-ndjson.js';
export type { ResultsWriterOptions } from './write-results.js';
export { createResultsWriter } from './write-results.js';
