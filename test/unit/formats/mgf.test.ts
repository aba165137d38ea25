import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { readMgf } from '../../../formats/mgf.js';
import { chunked, collect, errors, expectSchemaValid, spectra } from './read-helpers.js';

const FIXTURES = 'test/fixtures/mgf';
const read = (text: string | Buffer, chunk = 7) => collect(readMgf(chunked(text, chunk), { file: 'x.mgf' }));
const fixture = (name: string) => readFileSync(`${FIXTURES}/${name}`);

describe('readMgf on good input', () => {
  it('reads titles, precursors, charges, times, polarity, metadata and globals (CRLF, comments)', async () => {
    for (const chunk of [3, 7, 64, 1 << 20]) {
      const items = await read(fixture('simulated-basic.mgf'), chunk);
      expectSchemaValid(items);
      expect(items.map((i) => i.kind)).toEqual(['spectrum', 'spectrum', 'spectrum', 'spectrum']);
      const [a, b, c, d] = spectra(items);
      expect(a!.index).toBe(0);
      expect(a!.spectrum).toEqual({
        id: 'sim-cy3glc',
        precursor: { mz: 449.10784, intensity: 1.5e6, charge: 1 },
        polarity: 'positive',
        rt: 312.5,
        peaks: [
          [287.05501, 1000000],
          [449.10784, 120000],
        ],
        metadata: { COM: 'simulated test file', INSTRUMENT: 'simulated-qtof', scans: '101' },
      });
      expect(a!.warnings).toEqual([]);
      // "2+ and 3+": the first charge, with a warning.
      expect(b!.spectrum.precursor).toEqual({ mz: 581.1501, charge: 2 });
      // Its peaks were written out of order: sorted, with a warning.
      expect(b!.warnings.map((w) => w.code)).toEqual(['ambiguous-charge', 'unsorted-peaks']);
      expect(b!.spectrum.peaks).toEqual([
        [287.05501, 900000],
        [449.10784, 400000],
        [581.1501, 50000],
      ]);
      // No TITLE: a stable generated id; its own CHARGE=1- beats the global 1+.
      expect(c!.spectrum.id).toBe('index-2');
      expect(c!.spectrum.precursor.charge).toBe(-1);
      expect(c!.warnings.map((w) => w.code)).toEqual(['missing-id']);
      expect(c!.warnings[0]!.position).toMatchObject({ file: 'x.mgf', line: 27, index: 2 });
      expect(d!.spectrum).toMatchObject({
        id: 'sim-signs',
        precursor: { mz: 433.11292, intensity: 2000, charge: 1 },
        polarity: 'positive',
        rt: 120,
        metadata: { lambdaMaxNm: 520, compoundClass: 'anthocyanin' },
      });
      expect(d!.spectrum.peaks).toHaveLength(2);
    }
  });

  it('reads the charge notations 2+, 2-, +2, -2 and a bare 2', async () => {
    const block = (charge: string, extra = '') =>
      `BEGIN IONS\nTITLE=t\nPEPMASS=500\nCHARGE=${charge}\n${extra}100 1\nEND IONS\n`;
    const cases: [string, string, number][] = [
      ['2+', '', 2],
      ['2-', '', -2],
      ['+2', '', 2],
      ['-2', '', -2],
      ['2', '', 2],
      ['2', 'POLARITY=negative\n', -2],
      ['3+,4+', '', 3],
    ];
    for (const [charge, extra, z] of cases) {
      const [item] = await read(block(charge, extra));
      expect(item!.kind, charge).toBe('spectrum');
      expect(
        (item as { spectrum: { precursor: { charge: number } } }).spectrum.precursor.charge,
        charge,
      ).toBe(z);
    }
  });

  it('reads a file without a final line break, and an empty file as nothing', async () => {
    const items = await read('BEGIN IONS\nTITLE=a\nPEPMASS=300\n150 1\nEND IONS');
    expect(spectra(items).map((s) => s.spectrum.id)).toEqual(['a']);
    expect(await read('')).toEqual([]);
    expect(await read('# only a comment\n\n')).toEqual([]);
  });

  it('yields a block with no peaks as a spectrum with a no-peaks warning', async () => {
    const [item] = await read('BEGIN IONS\nTITLE=empty\nPEPMASS=300\nEND IONS\n');
    expect(item!.kind).toBe('spectrum');
    expect((item as { warnings: { code: string }[] }).warnings.map((w) => w.code)).toEqual(['no-peaks']);
  });

  it('keeps multi-byte UTF-8 titles intact across chunk edges', async () => {
    const items = await read(
      'BEGIN IONS\nTITLE=Cyanidin-3-O-β-glucoside (simulé)\nPEPMASS=449.1\n287.05 1\nEND IONS\n',
      1,
    );
    expect(spectra(items)[0]!.spectrum.id).toBe('Cyanidin-3-O-β-glucoside (simulé)');
  });
});

describe('readMgf on bad input', () => {
  it('turns each bad block into one error item with its line, and reads the good ones around them', async () => {
    const items = await read(fixture('simulated-bad.mgf'));
    expectSchemaValid(items);
    const summary = items.map((i) =>
      i.kind === 'spectrum'
        ? `ok ${i.spectrum.id}`
        : `${i.issue.code} ${i.id ?? '?'} @${i.issue.position.line}`,
    );
    expect(summary).toEqual([
      'ok good-1',
      'syntax garbage-line @12',
      'bad-peak nan-peak @17',
      'bad-peak negative-intensity @22',
      'bad-peak infinite-mz @27',
      'missing-precursor no-precursor @29',
      'bad-precursor negative-precursor @36',
      'bad-precursor nan-precursor @41',
      'bad-charge absurd-charge @47',
      'bad-charge zero-charge @53',
      'syntax nested @60',
      'ok after-nested',
      'ok unsorted',
      'bad-value nan-rt @76',
      'ok good-2',
    ]);
    expect(items.map((i) => i.index)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14]);
    for (const e of errors(items)) {
      expect(e.issue.severity).toBe('error');
      expect(e.issue.position).toMatchObject({ file: 'x.mgf', index: e.index, id: e.id });
      expect(e.issue.message.length).toBeGreaterThan(10);
    }
    const unsorted = spectra(items).find((s) => s.spectrum.id === 'unsorted')!;
    expect(unsorted.spectrum.peaks).toEqual([
      [303.04993, 100],
      [465.10275, 50],
    ]);
    expect(unsorted.warnings.map((w) => w.code).sort()).toEqual(['bad-peak', 'unsorted-peaks']);
  });

  it('reports a truncated file (no END IONS) after the complete blocks', async () => {
    const items = await read(fixture('simulated-truncated.mgf'));
    expect(items.map((i) => i.kind)).toEqual(['spectrum', 'error']);
    const e = errors(items)[0]!;
    expect(e.issue.code).toBe('truncated');
    expect(e.id).toBe('cut');
    expect(e.index).toBe(1);
    // Cut mid-line, without a final line break.
    const cut = await read('BEGIN IONS\nTITLE=c\nPEPMASS=300\n150.1 2');
    expect(errors(cut).map((x) => x.issue.code)).toEqual(['truncated']);
  });

  it('survives garbage bytes: the block holding them fails, the next one is read', async () => {
    const junk = Buffer.from([0x00, 0xff, 0xfe, 0x1b, 0x80, 0x0a, 0xc3, 0x28, 0x0a]);
    const input = Buffer.concat([
      Buffer.from('BEGIN IONS\nTITLE=a\nPEPMASS=300\n150 1\n'),
      junk,
      Buffer.from('END IONS\nBEGIN IONS\nTITLE=b\nPEPMASS=310\n155 1\nEND IONS\n'),
    ]);
    const items = await read(input, 5);
    expect(items.map((i) => (i.kind === 'spectrum' ? i.spectrum.id : i.issue.code))).toEqual(['syntax', 'b']);
  });

  it('reports garbage outside blocks as a warning on the next spectrum, or as an error when none follows', async () => {
    const items = await read(
      'PEPMASS=1\nBEGIN IONS\nTITLE=a\nPEPMASS=300\n150 1\nEND IONS\nrandom words\nBEGIN IONS\nTITLE=b\nPEPMASS=300\n150 1\nEND IONS\n',
    );
    const b = spectra(items)[1]!;
    expect(b.warnings[0]).toMatchObject({ code: 'syntax', severity: 'warning', position: { line: 7 } });
    const tail = await read('BEGIN IONS\nTITLE=a\nPEPMASS=300\n150 1\nEND IONS\nEND IONS\n');
    expect(tail.map((i) => i.kind)).toEqual(['spectrum', 'error']);
    expect(errors(tail)[0]!.index).toBe(1);
    const notMgf = await read('this is not\na peak list\n');
    expect(notMgf).toHaveLength(1);
    expect(errors(notMgf)[0]!.issue.code).toBe('syntax');
  });

  it('reports an overlong line without buffering it', async () => {
    const long = 'x'.repeat(5000);
    const items = await collect(
      readMgf(
        chunked(
          `BEGIN IONS\nTITLE=a\nPEPMASS=300\n${long}\nEND IONS\nBEGIN IONS\nTITLE=b\nPEPMASS=300\n1 1\nEND IONS\n`,
          100,
        ),
        {
          maxLineLength: 1000,
        },
      ),
    );
    expect(items.map((i) => (i.kind === 'spectrum' ? i.spectrum.id : i.issue.code))).toEqual(['syntax', 'b']);
  });

  it('stops keeping peaks beyond the schema limit of 200,000 per spectrum', async () => {
    const lines = Array.from({ length: 200_001 }, (_, i) => `${100 + i * 0.001} 1`).join('\n');
    const items = await read(
      `BEGIN IONS\nTITLE=huge\nPEPMASS=300\n${lines}\nEND IONS\nBEGIN IONS\nTITLE=b\nPEPMASS=300\n1 1\nEND IONS\n`,
      65536,
    );
    expect(items.map((i) => (i.kind === 'spectrum' ? i.spectrum.id : i.issue.code))).toEqual([
      'too-large',
      'b',
    ]);
  });

  it('rejects MS levels other than 2, and precursors beyond the schema', async () => {
    const items = await read(
      'BEGIN IONS\nTITLE=ms1\nMSLEVEL=1\nPEPMASS=300\n1 1\nEND IONS\nBEGIN IONS\nTITLE=big\nPEPMASS=25000\n1 1\nEND IONS\nBEGIN IONS\nTITLE=contra\nPOLARITY=negative\nCHARGE=2+\nPEPMASS=300\n1 1\nEND IONS\n',
    );
    expect(items.map((i) => (i.kind === 'error' ? i.issue.code : 'ok'))).toEqual([
      'not-ms2',
      'bad-precursor',
      'bad-charge',
    ]);
  });
});
