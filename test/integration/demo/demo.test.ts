import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { type DemoOutcome, runDemo } from '../../../demo/demo.js';
import { countKeys, probeRedis } from '../../../demo/service-mode.js';
import { ResultsDocumentSchema } from '../../../engine/report/result.js';
import { CSV_COLUMNS } from '../../../formats/index.js';
import { startTestRedis, type TestRedis, testPrefix } from '../../helpers/redis.js';

// Runs the demo on its SIMULATED data (demo/data) end to end and checks what it writes. The service run needs the
// build (`npm test` builds first): its workers run the built sandboxed processor from dist/.

class Sink extends Writable {
  text = '';
  override _write(chunk: Buffer | string, _enc: BufferEncoding, cb: () => void): void {
    this.text += chunk.toString();
    cb();
  }
}

/** RFC 4180 records (quoted cells may hold separators, quotes and line breaks). */
function parseCsv(text: string): string[][] {
  const rows: string[][] = [];
  let row: string[] = [];
  let cell = '';
  let quoted = false;
  for (let i = 0; i < text.length; i++) {
    const ch = text[i]!;
    if (quoted) {
      if (ch === '"' && text[i + 1] === '"') {
        cell += '"';
        i++;
      } else if (ch === '"') quoted = false;
      else cell += ch;
    } else if (ch === '"') quoted = true;
    else if (ch === ',') {
      row.push(cell);
      cell = '';
    } else if (ch === '\r' && text[i + 1] === '\n') {
      row.push(cell);
      rows.push(row);
      row = [];
      cell = '';
      i++;
    } else cell += ch;
  }
  if (cell !== '' || row.length > 0) rows.push([...row, cell]);
  return rows;
}

const tmp: string[] = [];
function tempDir(): string {
  const d = mkdtempSync(join(tmpdir(), 'peel-demo-test-'));
  tmp.push(d);
  return d;
}
afterAll(() => {
  for (const d of tmp) rmSync(d, { recursive: true, force: true });
});

/** Checks that the four files exist and parse; returns the results document. */
function checkFiles(o: DemoOutcome) {
  for (const f of Object.values(o.files)) expect(existsSync(f), f).toBe(true);

  const doc = ResultsDocumentSchema.parse(JSON.parse(readFileSync(o.files.json, 'utf8')));
  expect(doc.spectra).toHaveLength(66);
  expect(new Set(doc.spectra.map((s) => s.id)).size).toBe(66);
  expect(doc.ruleset.name).toBe('default');

  const csv = parseCsv(readFileSync(o.files.csv, 'utf8'));
  expect(csv[0]).toEqual([...CSV_COLUMNS]);
  for (const r of csv.slice(1)) expect(r).toHaveLength(CSV_COLUMNS.length);
  expect(new Set(csv.slice(1).map((r) => r[0])).size).toBe(66);

  // mzTab-M 2.0: tab-separated; every line a known section; rows as wide as their header.
  const lines = readFileSync(o.files.mztab, 'utf8').split('\n').filter(Boolean);
  expect(lines[0]).toBe('MTD\tmzTab-version\t2.0.0-M');
  const width: Record<string, number> = {};
  const header = { SML: 'SMH', SMF: 'SFH', SME: 'SEH' } as const;
  for (const line of lines) {
    const cells = line.split('\t');
    const kind = cells[0]!;
    expect(['MTD', 'COM', 'SMH', 'SML', 'SFH', 'SMF', 'SEH', 'SME']).toContain(kind);
    if (kind === 'SMH' || kind === 'SFH' || kind === 'SEH') width[kind] = cells.length;
    if (kind === 'SML' || kind === 'SMF' || kind === 'SME') expect(cells.length).toBe(width[header[kind]]);
  }
  const sml = lines.filter((l) => l.startsWith('SML\t')).length;
  expect(sml).toBeGreaterThanOrEqual(o.tally.annotated);

  // The report: one page, no scripts, nothing fetched from elsewhere, the caution and one block per spectrum.
  const html = readFileSync(o.files.html, 'utf8');
  expect(html.startsWith('<!doctype html>')).toBe(true);
  expect(html).toContain('SIMULATED DATA — PUTATIVE IDENTIFICATIONS');
  expect(html).not.toMatch(/<script|<link|<img|<iframe|\ssrc=|url\(|@import/i);
  expect(html.match(/<section class="spectrum"/g)).toHaveLength(66);
  expect((html.match(/<svg /g) ?? []).length).toBe(66);
  expect(html.match(/stroke="#2b6cb0"/g)?.length ?? 0).toBeGreaterThan(o.tally.annotated);
  return doc;
}

function checkSummary(o: DemoOutcome, stdout: string) {
  const t = o.tally;
  expect(t.spectra).toBe(66);
  expect(t.annotated + t.unassigned + t.errors).toBe(66);
  expect(o.withTruth).toBe(true);
  // The demo's truth file: 62 glycosides and 4 spectra that are not glycosides (demo/README.md).
  expect(t.glycosides).toBe(62);
  expect(t.decoys).toBe(4);
  expect(t.glycosidesAgree).toBeLessThanOrEqual(t.glycosides);
  expect(o.rows.filter((r) => r.truth === 'agrees')).toHaveLength(t.glycosidesAgree + t.decoysUnassigned);
  expect(stdout.split('\n')[0]).toMatch(/^Peel demo on SIMULATED data \(a fictional scenario/);
  expect(stdout).toMatch(/^ *# +spectrum +status +best candidate +ion +explained +level +tie +sim\. truth$/m);
  for (const r of o.rows) expect(stdout).toContain(r.id);
  expect(stdout).toContain(`66 spectra: ${t.annotated} annotated, ${t.unassigned} unassigned`);
  expect(stdout).toContain('Self-check on SIMULATED data (not a validation of Peel)');
}

let inProcess: DemoOutcome | undefined;

describe('npm run demo, in-process mode', () => {
  it('scores the demo batch in this process and writes results.json, .csv, .mztab and report.html', async () => {
    const out = tempDir();
    const stdout = new Sink();
    const stderr = new Sink();
    const o = await runDemo({ mode: 'in-process', outDir: out, stdout, stderr, tty: false });
    inProcess = o;
    expect(o.mode).toBe('in-process');
    expect(o.ok).toBe(true);
    expect(stderr.text).toMatch(/scoring in this process with the engine/);
    expect(stderr.text).toMatch(/100% 66\/66 spectra/); // plain progress lines, not a bar, off a terminal
    expect(stderr.text).not.toContain('\r');
    expect(Object.values(o.files).every((f) => f.startsWith(out))).toBe(true);
    checkFiles(o);
    checkSummary(o, stdout.text);
  });
});

describe('npm run demo, service mode (real Redis)', () => {
  let redis: TestRedis | undefined;
  let reachable = false;
  beforeAll(async () => {
    redis = await startTestRedis();
    reachable = (await probeRedis(redis.url, 2000)).ok;
  });
  afterAll(async () => {
    await redis?.stop();
  });

  it('runs API + workers, submits over HTTP, fetches the three formats, and leaves no keys or servers', async (ctx) => {
    if (!reachable || !redis) ctx.skip();
    const url = redis!.url;
    const prefix = testPrefix('demo');
    const stdout = new Sink();
    const stderr = new Sink();
    const o = await runDemo({
      mode: 'service',
      redisUrl: url,
      keyPrefix: prefix,
      outDir: tempDir(),
      stdout,
      stderr,
      tty: false,
      serviceLogLevel: 'silent',
    });
    expect(o.mode).toBe('service');
    expect(o.batch?.state).toBe('completed');
    expect(o.ok).toBe(true);
    expect(stderr.text).toMatch(/POST \/v1\/batches/);
    expect(stderr.text).toMatch(/service stopped/);
    expect(o.batch!.keysDeleted).toBeGreaterThan(0);
    expect(await countKeys(url, prefix)).toBe(0);
    const doc = checkFiles(o);
    checkSummary(o, stdout.text);
    // The mzTab-M came from the service: it names the batch.
    expect(readFileSync(o.files.mztab, 'utf8')).toContain(`MTD\tmzTab-ID\tpeel-${o.batch!.id}`);

    // The service and the embedded engine give the same answers on the same spectra.
    if (inProcess) {
      const local = new Map(inProcess.document.spectra.map((s) => [s.id, s]));
      for (const s of doc.spectra) {
        const l = local.get(s.id);
        expect(l, s.id).toBeDefined();
        expect(s.status, s.id).toBe(l!.status);
        expect(s.candidates[0]?.topology, s.id).toBe(l!.candidates[0]?.topology);
        expect(s.candidates[0]?.score, s.id).toBe(l!.candidates[0]?.score);
      }
    }
  });

  it('fails fast with a clear error when --service is asked for and Redis does not answer', async () => {
    const t0 = Date.now();
    const err = await runDemo({
      mode: 'service',
      redisUrl: 'redis://127.0.0.1:1',
      outDir: tempDir(),
      stdout: new Sink(),
      stderr: new Sink(),
      tty: false,
      probeTimeoutMs: 500,
    }).catch((e: unknown) => e as Error & { code?: string });
    expect(err).toMatchObject({ name: 'DemoError', code: 'redis-unreachable' });
    expect((err as Error).message).toMatch(/Redis does not answer at redis:\/\/127\.0\.0\.1:1/);
    expect(Date.now() - t0).toBeLessThan(5000);
  });

  it('falls back to in-process scoring, and says so, when Redis does not answer', async () => {
    const stderr = new Sink();
    const o = await runDemo({
      redisUrl: 'redis://127.0.0.1:1',
      outDir: tempDir(),
      stdout: new Sink(),
      stderr,
      tty: false,
      probeTimeoutMs: 500,
    });
    expect(o.mode).toBe('in-process');
    expect(o.fallbackReason).toMatch(/Redis does not answer/);
    expect(stderr.text).toMatch(
      /Redis does not answer at .*: scoring in this process with the engine instead/,
    );
  });
});
