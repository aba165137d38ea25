import { mkdir, readFile, writeFile } from 'node:fs/promises';
import { join, relative } from 'node:path';
import type { Writable } from 'node:stream';
import { DEMO_SCENARIO, type SimTruth, SimTruthFileSchema } from '../bench/sim/index.js';
import type { ResultsDocument, RuleSetRef } from '../engine/report/result.js';
import { loadDefaultRuleSet, readSpectraFile } from '../formats/index.js';
import { packageRoot, peelVersion } from '../formats/package-root.js';
import { scoreInProcess } from './in-process.js';
import { createDemoProgress } from './progress.js';
import { renderReportHtml } from './report-html.js';
import { DemoError, probeRedis, redactUrl, scoreViaService } from './service-mode.js';
import { formatSummaryTable, formatTally, type SummaryRow, type SummaryTally, summarise } from './summary.js';

/** The demo batch: file names under the data directory. */
export const DEMO_FILES = {
  spectra: ['berry-pigments-pos.mgf', 'berry-pigments-neg.mgf'],
  truth: 'berry-pigments.truth.json',
} as const;

/** How the demo scores: through the service (needs Redis), in this process, or whichever is possible. */
export type DemoMode = 'auto' | 'service' | 'in-process';

/** Options of {@link runDemo}. */
export interface DemoOptions {
  /** @defaultValue auto (the service when Redis answers, else in-process) */
  mode?: DemoMode;
  /** @defaultValue redis://127.0.0.1:6379 */
  redisUrl?: string;
  /** Directory of the demo data. @defaultValue demo/data under the package root */
  dataDir?: string;
  /** Directory the results and the report are written to. @defaultValue demo/out under the package root */
  outDir?: string;
  /** Where the summary goes. */
  stdout: Writable;
  /** Where narration and progress go. */
  stderr: Writable;
  /** Whether stderr is a terminal (a live progress bar). */
  tty: boolean;
  /** Stops the run (Ctrl-C); the service is still shut down and its keys deleted. */
  signal?: AbortSignal;
  /** How long to wait for Redis to answer, ms. @defaultValue 1500 */
  probeTimeoutMs?: number;
  /** Log level of the in-process service. @defaultValue warn */
  serviceLogLevel?: 'warn' | 'error' | 'silent';
  /** Redis key prefix of the service run. @defaultValue `{peel-demo-<random>}` */
  keyPrefix?: string;
  /** Clock for the report's date. @defaultValue `() => new Date()` */
  now?: () => Date;
}

/** What a demo run did. */
export interface DemoOutcome {
  mode: 'service' | 'in-process';
  /** Why the service was not used, when it was not. */
  fallbackReason?: string;
  files: { json: string; csv: string; mztab: string; html: string };
  document: ResultsDocument;
  rows: SummaryRow[];
  tally: SummaryTally;
  withTruth: boolean;
  /** Service mode: the batch, its final state, the key prefix and how many keys were deleted. */
  batch?: { id: string; state: string; keyPrefix: string; keysDeleted: number };
  /** False when the batch did not complete (the files are still written). */
  ok: boolean;
}

const SCENARIO_LINE =
  'Fernhollow Plant Metabolomics Core, batch FH-2026-031 for the Brambleton berry breeding programme';

interface InputSpectra {
  total: number;
  peaks: Map<string, Array<readonly [number, number]>>;
  precursors: Map<string, number>;
  samples: string[];
  unreadable: number;
}

async function readInputs(files: readonly string[]): Promise<InputSpectra> {
  const out: InputSpectra = { total: 0, peaks: new Map(), precursors: new Map(), samples: [], unreadable: 0 };
  const samples = new Set<string>();
  for (const file of files) {
    for await (const item of readSpectraFile(file)) {
      out.total++;
      if (item.kind === 'error') {
        out.unreadable++;
        continue;
      }
      const s = item.spectrum;
      out.peaks.set(
        s.id,
        s.peaks.map(([mz, i]) => [mz, i] as const),
      );
      out.precursors.set(s.id, s.precursor.mz);
      const meta = s.metadata ?? {};
      const sample = Object.entries(meta).find(([k]) => k.toLowerCase() === 'sample')?.[1];
      if (typeof sample === 'string') samples.add(sample);
    }
  }
  out.samples = [...samples].sort();
  return out;
}

async function readTruths(path: string): Promise<SimTruth[] | undefined> {
  try {
    const parsed = SimTruthFileSchema.safeParse(JSON.parse(await readFile(path, 'utf8')));
    return parsed.success ? parsed.data.truths : undefined;
  } catch {
    return undefined;
  }
}

/**
 * Runs the demo: scores the simulated demo batch through the Redis-backed service when Redis answers (else
 * in this process, and says so), prints a ranked summary with a self-check against the simulated truth, and
 * writes results.json, results.csv, results.mztab and report.html. Throws {@link DemoError} when it cannot
 * finish; never leaves the service running.
 */
export async function runDemo(o: DemoOptions): Promise<DemoOutcome> {
  const root = packageRoot();
  const dataDir = o.dataDir ?? join(root, 'demo', 'data');
  const outDir = o.outDir ?? join(root, 'demo', 'out');
  const redisUrl = o.redisUrl ?? 'redis://127.0.0.1:6379';
  const mode = o.mode ?? 'auto';
  const files = DEMO_FILES.spectra.map((f) => join(dataDir, f));
  const show = (p: string) => {
    const r = relative(process.cwd(), p);
    return r && !r.startsWith('..') ? r : p;
  };
  const say = (line: string) => o.stderr.write(`peel demo: ${line}\n`);
  const print = (line = '') => o.stdout.write(`${line}\n`);

  let inputs: InputSpectra;
  try {
    inputs = await readInputs(files);
  } catch (err) {
    throw new DemoError(`cannot read the demo data in ${show(dataDir)}: ${(err as Error).message}`, 'input', {
      cause: err,
    });
  }
  print(
    `Peel demo on SIMULATED data (a fictional scenario: ${SCENARIO_LINE}): scores ${inputs.total} simulated MS2 ` +
      `spectra of berry pigments, prints a ranked summary and writes JSON, CSV, mzTab-M and an HTML report to ${show(outDir)}/.`,
  );

  const rulesFile = await loadDefaultRuleSet();
  if (!rulesFile.value || !rulesFile.ref) {
    throw new DemoError(
      `the default rule set ${rulesFile.path} is not valid: ${rulesFile.errors.map((e) => e.message).join('; ')}`,
      'input',
    );
  }
  const rules = rulesFile.value;
  const ruleset: RuleSetRef = rulesFile.ref;
  const truths = await readTruths(join(dataDir, DEMO_FILES.truth));

  let chosen: 'service' | 'in-process' = 'in-process';
  let fallbackReason: string | undefined;
  if (mode === 'in-process') {
    fallbackReason = '--in-process was given';
  } else {
    const probe = await probeRedis(redisUrl, o.probeTimeoutMs ?? 1500);
    if (probe.ok) chosen = 'service';
    else if (mode === 'service') {
      throw new DemoError(
        `Redis does not answer at ${redactUrl(redisUrl)} (${probe.reason})`,
        'redis-unreachable',
      );
    } else fallbackReason = `Redis does not answer at ${redactUrl(redisUrl)} (${probe.reason})`;
  }
  const progress = createDemoProgress({ stream: o.stderr, tty: o.tty });

  let document: ResultsDocument;
  let texts: { json: string; csv: string; mztab: string };
  let batch: DemoOutcome['batch'];
  let howScored: string;
  if (chosen === 'service') {
    say(
      `Redis answers at ${redactUrl(redisUrl)}: running the whole service path (HTTP API + BullMQ workers)`,
    );
    const r = await scoreViaService({
      redisUrl,
      files,
      uploadName: 'FH-2026-031.mgf',
      metadata: {
        simulated: true,
        note: 'SIMULATED DATA: Peel demo batch of a fictional scenario; no spectrum was measured.',
        facility: 'Fernhollow Plant Metabolomics Core (fictional)',
        programme: 'Brambleton berry breeding programme (fictional)',
        batch: 'FH-2026-031',
        instrument: 'Q-TOF-class LC-MS/MS (simulated)',
        ...(inputs.samples.length > 0 ? { sampleIds: inputs.samples } : {}),
      },
      ...(o.keyPrefix ? { keyPrefix: o.keyPrefix } : {}),
      progress,
      say,
      ...(o.serviceLogLevel ? { logLevel: o.serviceLogLevel } : {}),
      ...(o.signal ? { signal: o.signal } : {}),
    });
    document = r.document;
    texts = r.texts;
    batch = { id: r.batchId, state: r.state, keyPrefix: r.keyPrefix, keysDeleted: r.keysDeleted };
    howScored =
      `Scored through Peel's service: API and BullMQ workers on Redis, batch ${r.batchId} submitted over HTTP as one ` +
      `MGF upload, results fetched over HTTP (final state: ${r.state}).`;
  } else {
    say(
      mode === 'in-process'
        ? 'scoring in this process with the engine (--in-process): no API, queue or workers involved'
        : `${fallbackReason}: scoring in this process with the engine instead — no API, queue or workers involved ` +
            '(start Redis, or set REDIS_URL, to run the whole service path)',
    );
    const r = await scoreInProcess({
      files,
      rules,
      ruleset,
      total: inputs.total,
      progress,
      ...(o.signal ? { signal: o.signal } : {}),
    });
    document = r.document;
    texts = r.texts;
    howScored = `Scored in one process with Peel's engine (${fallbackReason ?? 'no service'}), no API or queue involved.`;
  }

  const withTruth = truths !== undefined;
  const { rows, tally } = summarise(
    document.spectra,
    truths,
    rules.aglycones.map((a) => a.name),
  );
  const out = {
    json: join(outDir, 'results.json'),
    csv: join(outDir, 'results.csv'),
    mztab: join(outDir, 'results.mztab'),
    html: join(outDir, 'report.html'),
  };
  const html = renderReportHtml({
    scenario: DEMO_SCENARIO,
    howScored,
    ruleset: document.ruleset,
    peelVersion: peelVersion(),
    generatedAt: (o.now ?? (() => new Date()))().toISOString(),
    results: document.spectra,
    rows,
    tally,
    withTruth,
    peaks: inputs.peaks,
    precursors: inputs.precursors,
    ...(document.disclaimer ? { disclaimer: document.disclaimer } : {}),
  });
  try {
    await mkdir(outDir, { recursive: true });
    await Promise.all([
      writeFile(out.json, texts.json),
      writeFile(out.csv, texts.csv),
      writeFile(out.mztab, texts.mztab),
      writeFile(out.html, html),
    ]);
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code ?? (err as Error).message;
    throw new DemoError(`cannot write the results to ${show(outDir)} (${code})`, 'output', { cause: err });
  }

  print();
  print(
    `Ranked summary — SIMULATED data, putative identifications (rule set ${document.ruleset.name} ${document.ruleset.version}; ` +
      `${chosen === 'service' ? `scored by the service, batch ${batch?.id}` : 'scored in this process'}):`,
  );
  print();
  print(formatSummaryTable(rows, withTruth));
  print();
  for (const line of formatTally(tally, withTruth)) print(line);
  if (!withTruth) print(`(No truth file at ${show(join(dataDir, DEMO_FILES.truth))}: self-check skipped.)`);
  if (inputs.unreadable > 0)
    print(`${inputs.unreadable} spectrum block(s) could not be read; they are error results.`);
  print();
  print(`Written: ${show(out.json)}, ${show(out.csv)}, ${show(out.mztab)}`);
  print(`Report:  ${show(out.html)} (open it in a browser; no network needed)`);
  const ok = batch === undefined || batch.state === 'completed';
  if (!ok) say(`the batch ended "${batch?.state}": some spectra could not be processed (see their results)`);
  return {
    mode: chosen,
    ...(fallbackReason ? { fallbackReason } : {}),
    files: out,
    document,
    rows,
    tally,
    withTruth,
    ...(batch ? { batch } : {}),
    ok,
  };
}
