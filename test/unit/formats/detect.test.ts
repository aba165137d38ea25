import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import {
  formatFromName,
  isGzip,
  readSpectra,
  readSpectraFile,
  sniffFormat,
} from '../../../formats/detect.js';
import { chunked, collect } from './read-helpers.js';

const MGF = readFileSync('test/fixtures/mgf/simulated-basic.mgf');
const MZML = readFileSync('test/fixtures/mzml/tiny.pwiz.1.1.mzML');
const JSON_DOC = readFileSync('test/fixtures/json/simulated-spectra.json');
const ids = (items: Awaited<ReturnType<typeof collect>>) =>
  items.map((i) => (i.kind === 'spectrum' ? i.spectrum.id : `${i.issue.code}`));

describe('format detection', () => {
  it('knows formats by extension, looking through .gz', () => {
    expect(formatFromName('run1.mgf')).toBe('mgf');
    expect(formatFromName('/data/Run1.mzML')).toBe('mzml');
    expect(formatFromName('run1.mzml.gz')).toBe('mzml');
    expect(formatFromName('batch.json')).toBe('json');
    expect(formatFromName('batch.ndjson.gz')).toBe('json');
    expect(formatFromName('batch.jsonl')).toBe('json');
    expect(formatFromName('notes.txt')).toBeUndefined();
    expect(formatFromName('mgf')).toBeUndefined();
  });

  it('knows formats by their first bytes', () => {
    expect(sniffFormat(MGF)).toBe('mgf');
    expect(sniffFormat(MZML)).toBe('mzml');
    expect(sniffFormat(JSON_DOC)).toBe('json');
    expect(sniffFormat('\uFEFF  {"id":"a"}')).toBe('json');
    expect(sniffFormat('# comment\nCHARGE=1+\n')).toBe('mgf');
    expect(sniffFormat('hello world')).toBeUndefined();
    expect(sniffFormat('')).toBeUndefined();
    expect(isGzip(gzipSync(MGF))).toBe(true);
    expect(isGzip(MGF)).toBe(false);
  });
});

describe('readSpectra and readSpectraFile', () => {
  const dir = mkdtempSync(join(tmpdir(), 'peel-detect-'));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('picks the reader from the content when there is no name', async () => {
    expect(ids(await collect(readSpectra(chunked(MGF, 50))))).toEqual([
      'sim-cy3glc',
      'sim-cy-hex-pen',
      'index-2',
      'sim-signs',
    ]);
    expect(ids(await collect(readSpectra(chunked(MZML, 50))))).toEqual(['scan=20']);
    expect(ids(await collect(readSpectra(chunked(JSON_DOC, 50))))).toEqual(['sim-cy3glc', 'sim-q3glc-neg']);
    expect(ids(await collect(readSpectra(JSON_DOC.toString())))).toEqual(['sim-cy3glc', 'sim-q3glc-neg']);
  });

  it('decompresses gzip input on the fly, whatever its name', async () => {
    for (const [data, want] of [
      [MGF, 4],
      [MZML, 1],
      [JSON_DOC, 2],
    ] as const) {
      const items = await collect(readSpectra(chunked(gzipSync(data), 33)));
      expect(items.filter((i) => i.kind === 'spectrum')).toHaveLength(want);
    }
  });

  it('opens files by path, plain and gzip-compressed', async () => {
    writeFileSync(join(dir, 'a.mgf.gz'), gzipSync(MGF));
    writeFileSync(join(dir, 'b.mzML.gz'), gzipSync(MZML));
    writeFileSync(join(dir, 'no-extension'), JSON_DOC);
    expect(ids(await collect(readSpectraFile(join(dir, 'a.mgf.gz'))))).toHaveLength(4);
    expect(ids(await collect(readSpectraFile(join(dir, 'b.mzML.gz'))))).toEqual(['scan=20']);
    expect(ids(await collect(readSpectraFile(join(dir, 'no-extension'))))).toEqual([
      'sim-cy3glc',
      'sim-q3glc-neg',
    ]);
    const items = await collect(readSpectraFile('test/fixtures/mgf/simulated-bad.mgf'));
    const e = items.find((i) => i.kind === 'error');
    expect(e?.kind === 'error' && e.issue.position.file).toBe('test/fixtures/mgf/simulated-bad.mgf');
    await expect(collect(readSpectraFile(join(dir, 'missing.mgf')))).rejects.toMatchObject({
      code: 'ENOENT',
    });
  });

  it('reads a gzip file cut short as a truncated file', async () => {
    const gz = gzipSync(MGF);
    const items = await collect(
      readSpectra(gz.subarray(0, Math.floor(gz.length * 0.6)), { file: 'cut.mgf.gz' }),
    );
    expect(items.at(-1)).toMatchObject({ kind: 'error', issue: { code: 'truncated' } });
    expect(items.filter((i) => i.kind === 'spectrum').length).toBeGreaterThan(0);
  });

  it('reports corrupt gzip data and unknown formats as error items', async () => {
    const gz = Buffer.from(gzipSync(Buffer.concat(Array.from({ length: 50 }, () => MGF))));
    gz.fill(0x55, 200, 260);
    const items = await collect(readSpectra(chunked(gz, 64)));
    expect(items.at(-1)).toMatchObject({ kind: 'error', issue: { code: 'bad-compression' } });
    expect(ids(await collect(readSpectra('hello world')))).toEqual(['unknown-format']);
    expect(ids(await collect(readSpectra('')))).toEqual(['unknown-format']);
  });

  it('lets options.format override the name and content', async () => {
    const items = await collect(readSpectra(MGF, { format: 'mzml', file: 'x.mgf' }));
    expect(ids(items)).toEqual(['syntax']);
  });
});
