import { readFileSync } from 'node:fs';
import { gzipSync } from 'node:zlib';
import { beforeAll, describe, expect, it } from 'vitest';
import { generateSet } from '../../../bench/sim/generate.js';
import {
  ResultsDocumentSchema,
  type SpectrumResult,
  SpectrumResultSchema,
} from '../../../engine/report/result.js';
import { CSV_COLUMNS } from '../../../formats/write-csv.js';
import { writeMzml } from '../../helpers/write-mzml.js';
import { CYANIDIN_HEX_PEN, mgfBlock, score, useTempDir } from './cli-helpers.js';

const DEMO_POS = 'demo/data/berry-pigments-pos.mgf';
const FIXTURE_JSON = 'test/fixtures/json/simulated-spectra.json';

function parseDoc(text: string) {
  return ResultsDocumentSchema.parse(JSON.parse(text));
}

describe('peel score: inputs', () => {
  const tmp = useTempDir();

  it('scores the simulated demo MGF into the DESIGN.md results document, one result per spectrum in order', async () => {
    const { code, out, err } = await score([DEMO_POS]);
    expect(code).toBe(0);
    const doc = parseDoc(out);
    const titles = [...readFileSync(DEMO_POS, 'utf8').matchAll(/^TITLE=(.*)$/gm)].map((m) => m[1]!.trim());
    expect(doc.spectra.map((s) => s.id)).toEqual(titles);
    expect(doc.spectra.map((s) => s.index)).toEqual(titles.map((_, i) => i));
    expect(doc.ruleset.name).toBe('default');
    expect(doc.ruleset.sha256).toMatch(/^[0-9a-f]{64}$/);
    expect(doc.disclaimer).toMatch(/putative/i);
    for (const s of doc.spectra) {
      expect(['annotated', 'unassigned']).toContain(s.status);
      if (s.status === 'unassigned') expect(s.reason?.code).toBeTruthy();
      for (const [i, c] of s.candidates.entries()) {
        expect(c.rank).toBeGreaterThanOrEqual(i === 0 ? 1 : s.candidates[i - 1]!.rank);
      }
    }
    // Not a TTY: no bar, one summary line.
    expect(err).not.toContain('\r');
    expect(err.trim().split('\n')).toHaveLength(1);
    expect(err).toMatch(new RegExp(`^peel score: ${titles.length} spectra from 1 file`));
  });

  it('reads mzML (zlib, 64-bit arrays), MS1 scans skipped, ids from the spectrum elements', async () => {
    const set = generateSet({ count: 6, seed: 'score-cli-mzml', decoyFraction: 0 });
    const path = tmp.file(
      'sim.mzML',
      writeMzml(
        set.map((x) => x.spectrum),
        { ms1: true, indexed: true },
      ),
    );
    const { code, out } = await score([path]);
    expect(code).toBe(0);
    const doc = parseDoc(out);
    expect(doc.spectra.map((s) => s.id)).toEqual(set.map((x) => x.spectrum.id));
    expect(doc.spectra.every((s) => s.status !== 'error')).toBe(true);
    expect(doc.spectra.filter((s) => s.status === 'annotated').length).toBeGreaterThan(0);
  });

  it('reads the HUPO-PSI mzML 1.1 example file (tiny.pwiz.1.1.mzML): its one MS2 spectrum, warnings listed', async () => {
    // test/fixtures/mzml/tiny.pwiz.1.1.mzML: the example published with the HUPO-PSI mzML 1.1 specification.
    const { code, out, err } = await score(['test/fixtures/mzml/tiny.pwiz.1.1.mzML']);
    expect(code).toBe(0);
    const doc = parseDoc(out);
    expect(doc.spectra.map((s) => s.id)).toEqual(['scan=20']);
    expect(doc.spectra[0]!.status).not.toBe('error');
    expect(err).toMatch(/tiny\.pwiz\.1\.1\.mzML:\d+: warning profile-data \(result 1 spectrum scan=20\)/);
    expect(err).toMatch(/1 spectrum from 1 file .* 2 reader warning\(s\)/);
  });

  it('reads a JSON document and gzip-compressed MGF; index counts within each file, metadata.file names it', async () => {
    const gz = tmp.file('cy.mgf.gz', gzipSync(CYANIDIN_HEX_PEN));
    const { code, out, err } = await score([FIXTURE_JSON, gz]);
    expect(code).toBe(0);
    const doc = parseDoc(out);
    expect(doc.spectra.map((s) => s.id)).toEqual(['sim-cy3glc', 'sim-q3glc-neg', 'cy-hex-pen']);
    expect(doc.spectra.map((s) => s.index)).toEqual([0, 1, 0]);
    expect(doc.spectra.map((s) => s.metadata?.file)).toEqual([
      'simulated-spectra.json',
      'simulated-spectra.json',
      'cy.mgf.gz',
    ]);
    expect(doc.spectra[0]!.rt).toBe(312.5);
    expect(err).toMatch(/3 spectra from 2 files/);
  });

  it('reads standard input for "-"', async () => {
    const { code, out } = await score(['-'], { stdin: CYANIDIN_HEX_PEN });
    expect(code).toBe(0);
    expect(parseDoc(out).spectra.map((s) => s.id)).toEqual(['cy-hex-pen']);
  });

  it('turns a broken spectrum into an error result and scores the ones around it', async () => {
    const text =
      mgfBlock('good-1', 449.10784, '1+', [
        [287.05501, 1000],
        [449.10784, 100],
      ]) +
      'BEGIN IONS\nTITLE=broken\nPEPMASS=449.10784\nCHARGE=1+\n287.05501 lots\nEND IONS\n' +
      CYANIDIN_HEX_PEN;
    const path = tmp.file('one-bad.mgf', text);
    const { code, out, err } = await score([path]);
    expect(code).toBe(0);
    const doc = parseDoc(out);
    expect(doc.spectra.map((s) => [s.id, s.index, s.status])).toEqual([
      ['good-1', 0, 'annotated'],
      ['broken', 1, 'error'],
      ['cy-hex-pen', 2, 'annotated'],
    ]);
    const bad = doc.spectra[1]!;
    expect(bad.reason?.code).toBe('bad-peak');
    expect(bad.reason?.message).toMatch(/line 12/);
    expect(bad.reason?.message).toMatch(/one-bad\.mgf/);
    expect(bad.candidates).toEqual([]);
    expect(err).toMatch(/one-bad\.mgf:12: error bad-peak \(result 1 spectrum broken\)/);
    expect(err).toMatch(/2 annotated, 0 unassigned, 1 error;/);
  });

  it('names a result the reader could not identify index-N', async () => {
    const path = tmp.file(
      'no-title.mgf',
      `${CYANIDIN_HEX_PEN}BEGIN IONS\nPEPMASS=-3\n287.05501 10\nEND IONS\n`,
    );
    const { code, out } = await score([path]);
    expect(code).toBe(0);
    const doc = parseDoc(out);
    expect(doc.spectra[1]).toMatchObject({ id: 'index-1', index: 1, status: 'error' });
    expect(doc.spectra[1]!.reason?.code).toBe('bad-precursor');
  });

  it('exits 1 without output when a file cannot be opened', async () => {
    const r = await score([DEMO_POS, `${tmp.dir}/missing.mgf`]);
    expect(r.code).toBe(1);
    expect(r.out).toBe('');
    expect(r.err).toMatch(/cannot open .*missing\.mgf: no such file \(ENOENT\)/);
    const d = await score([tmp.dir]);
    expect(d.code).toBe(1);
    expect(d.err).toMatch(/is a directory/);
  });

  it('records a file in no known format as one error result', async () => {
    const path = tmp.file('notes.dat', 'these are not spectra\n');
    const { code, out } = await score([path]);
    expect(code).toBe(0);
    const doc = parseDoc(out);
    expect(doc.spectra).toHaveLength(1);
    expect(doc.spectra[0]!.reason?.code).toBe('unknown-format');
  });
});

describe('peel score: output formats', () => {
  const tmp = useTempDir();
  let input: string;
  beforeAll(() => {
    input = tmp.file(
      'two.mgf',
      CYANIDIN_HEX_PEN +
        mgfBlock('cy-hex', 449.10784, '1+', [
          [287.05501, 1000],
          [449.10784, 90],
        ]),
    );
  });

  it('json to --out: the same document as on stdout, nothing on stdout', async () => {
    const out = `${tmp.dir}/r.json`;
    const r = await score([input, '--out', out]);
    expect(r.code).toBe(0);
    expect(r.out).toBe('');
    expect(r.err).toMatch(/json written to .*r\.json/);
    const doc = parseDoc(readFileSync(out, 'utf8'));
    expect(doc.spectra.map((s) => s.id)).toEqual(['cy-hex-pen', 'cy-hex']);
  });

  it('ndjson: header, one SpectrumResult per line, footer', async () => {
    const r = await score([input, '--format', 'ndjson']);
    expect(r.code).toBe(0);
    const lines = r.out
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l) as Record<string, unknown>);
    expect(lines[0]!.type).toBe('header');
    expect(lines.at(-1)).toMatchObject({ type: 'footer', spectra: 2 });
    const results = lines.slice(1, -1).map((l) => SpectrumResultSchema.parse(l));
    expect(results.map((x) => [x.id, x.index])).toEqual([
      ['cy-hex-pen', 0],
      ['cy-hex', 1],
    ]);
  });

  it('csv: the documented header, one row per candidate', async () => {
    const r = await score([input, '--format=csv']);
    expect(r.code).toBe(0);
    const rows = r.out.split('\r\n').filter((l) => l.length > 0);
    expect(rows[0]).toBe(CSV_COLUMNS.join(','));
    const doc = parseDoc((await score([input])).out);
    const expected = doc.spectra.reduce((n, s) => n + Math.max(1, s.candidates.length), 0);
    expect(rows.length - 1).toBe(expected);
    expect(rows[1]!.startsWith('cy-hex-pen,0,annotated,')).toBe(true);
  });

  it('mztab: MTD/SML/SMF/SME sections, one ms_run per input file, rows pointing at their run', async () => {
    const second = tmp.file(
      'second.mgf',
      mgfBlock('other', 449.10784, '1+', [
        [287.05501, 1000],
        [449.10784, 90],
      ]),
    );
    const r = await score([input, second, '--format', 'mztab']);
    expect(r.code).toBe(0);
    const lines = r.out.split('\n');
    expect(lines[0]).toBe('MTD\tmzTab-version\t2.0.0-M');
    const mtd = new Map(
      lines.filter((l) => l.startsWith('MTD\t')).map((l) => [l.split('\t')[1]!, l.split('\t')[2]!]),
    );
    expect(mtd.get('ms_run[1]-location')).toMatch(/^file:\/\/.*two\.mgf$/);
    expect(mtd.get('ms_run[2]-location')).toMatch(/^file:\/\/.*second\.mgf$/);
    for (const p of ['SMH', 'SML', 'SFH', 'SMF', 'SEH', 'SME'])
      expect(lines.some((l) => l.startsWith(`${p}\t`))).toBe(true);
    const seh = lines.find((l) => l.startsWith('SEH\t'))!.split('\t');
    const ref = seh.indexOf('spectra_ref');
    const refs = lines.filter((l) => l.startsWith('SME\t')).map((l) => l.split('\t')[ref]!);
    expect(refs.some((x) => x.startsWith('ms_run[1]:'))).toBe(true);
    // Peak-list spectra are referenced by their 0-based index in their own file.
    expect(refs).toContain('ms_run[2]:index=0');
    expect(refs).toContain('ms_run[1]:index=1');
  });
});

describe('peel score: options', () => {
  const tmp = useTempDir();

  it.each([
    [['x.mgf', '--format', 'xml'], /--format must be one of json, ndjson, csv, mztab/],
    [['x.mgf', '--ppm', 'ten'], /--ppm must be a number/],
    [['x.mgf', '--precursor-ppm', '0'], /--precursor-ppm must be a number/],
    [['x.mgf', '--bogus'], /unknown option --bogus/],
    [['x.mgf', '--out'], /--out needs a value/],
    [[], /give at least one spectrum file/],
    [['x.mgf', '--ppm', '5', '--ppm', '6'], /--ppm is given twice/],
  ])('usage mistake %j exits 2', async (argv, message) => {
    const r = await score(argv as string[]);
    expect(r.code).toBe(2);
    expect(r.out).toBe('');
    expect(r.err).toMatch(message);
  });

  it('refuses an --out that is also an input', async () => {
    const path = tmp.file('in.mgf', CYANIDIN_HEX_PEN);
    const r = await score([path, '--out', path]);
    expect(r.code).toBe(2);
    expect(readFileSync(path, 'utf8')).toBe(CYANIDIN_HEX_PEN);
  });

  it('exits 1 before scoring when --out cannot be written', async () => {
    const path = tmp.file('in2.mgf', CYANIDIN_HEX_PEN);
    const r = await score([path, '--out', `${tmp.dir}/no/such/dir/r.json`]);
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/cannot write .*r\.json: ENOENT/);
  });

  it('prints its usage with --help', async () => {
    const r = await score(['--help']);
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/^Usage: peel score FILE\.\.\./);
  });

  it('exits 1 with file:line of every problem for an invalid --rules file', async () => {
    const rules = tmp.file(
      'bad-rules.yaml',
      'name: broken\nversion: 1.0.0\nresidues:\n  - name: Hex\n    formula: C6H10Q5\n',
    );
    const r = await score([DEMO_POS, '--rules', rules]);
    expect(r.code).toBe(1);
    expect(r.out).toBe('');
    expect(r.err).toMatch(/bad-rules\.yaml:\d+:\d+: error /);
    expect(r.err).toMatch(/the rule set .*bad-rules\.yaml is not valid/);
  });

  it('uses a valid --rules file and names it in the results', async () => {
    const text = readFileSync('rules/default.yaml', 'utf8').replace(/^name: default$/m, 'name: lab-copy');
    const rules = tmp.file('lab.yaml', text);
    const input = tmp.file('cy.mgf', CYANIDIN_HEX_PEN);
    const r = await score([input, '--rules', rules]);
    expect(r.code).toBe(0);
    expect(parseDoc(r.out).ruleset.name).toBe('lab-copy');
  });

  // Fragment 449 measured 8 ppm high (0.0036 Da, above the 0.002 Da floor): inside the default 10 ppm window,
  // outside a 3 ppm one.
  const shifted = (ppm: number) => +(449.10784 * (1 + ppm / 1e6)).toFixed(5);

  it('--ppm sets the fragment tolerance', async () => {
    const input = tmp.file(
      'shifted.mgf',
      mgfBlock('cy-hex-pen-shifted', 581.15009, '1+', [
        [287.05501, 1000],
        [shifted(8), 420],
        [581.15009, 80],
      ]),
    );
    const wide = parseDoc((await score([input])).out).spectra[0]!;
    const narrow = parseDoc((await score([input, '--ppm', '3'])).out).spectra[0]!;
    const has449 = (s: SpectrumResult) =>
      (s.candidates[0]?.matchedPeaks ?? []).some((p) => Math.abs(p.mz - shifted(8)) < 1e-4);
    expect(has449(wide)).toBe(true);
    expect(has449(narrow)).toBe(false);
    for (const p of narrow.candidates.flatMap((c) => c.matchedPeaks)) {
      expect(Math.abs(p.ppm) <= 3 + 1e-6 || (Math.abs(p.ppm) * p.mz) / 1e6 <= 0.002 + 1e-9).toBe(true);
    }
  });

  it('--precursor-ppm sets the precursor tolerance', async () => {
    const mz = +(581.15009 * (1 + 4 / 1e6)).toFixed(5);
    const input = tmp.file(
      'pshift.mgf',
      mgfBlock('cy-pshift', mz, '1+', [
        [287.05501, 1000],
        [449.10784, 420],
      ]),
    );
    const wide = parseDoc((await score([input, '--precursor-ppm', '5'])).out).spectra[0]!;
    expect(wide.candidates[0]?.aglycone.name).toBe('cyanidin');
    const narrow = parseDoc((await score([input, '--precursor-ppm', '1'])).out).spectra[0]!;
    for (const c of narrow.candidates) expect(Math.abs(c.ppm)).toBeLessThanOrEqual(1 + 1e-6);
    expect(narrow.candidates.some((c) => c.aglycone.name === 'cyanidin' && c.topology.includes('Pen'))).toBe(
      false,
    );
  });

  it('draws a progress bar on a terminal and still ends with the summary', async () => {
    const r = await score([DEMO_POS], { isTty: true });
    expect(r.code).toBe(0);
    expect(r.err).toContain('\r\x1b[K');
    expect(r.err).toMatch(/\d+ spectra · [\d,]+\/s/);
    expect(r.err.split('\r\x1b[K').at(-1)).toMatch(/^peel score: \d+ spectra[^\n]*\n$/);
  });
});

describe('peel score: chemistry through the command line', () => {
  const tmp = useTempDir();

  it('ranks cyanidin + Hex + Pen first for 581.15009 → 449.10784 → 287.05501 (REFERENCE.md §4, common practice)', async () => {
    const input = tmp.file('cy.mgf', CYANIDIN_HEX_PEN);
    const { code, out } = await score([input]);
    expect(code).toBe(0);
    const s = parseDoc(out).spectra[0]!;
    expect(s.status).toBe('annotated');
    expect(s.precursor?.ionType).toBe('[M]+');
    const best = s.candidates[0]!;
    expect(best.rank).toBe(1);
    expect([best.aglycone.name, ...best.aglycone.alternatives]).toContain('cyanidin');
    expect(best.aglycone.formula).toBe('C15H11O6+');
    expect(best.substituents.map((x) => `${x.linkage}-${x.residue}`).sort()).toEqual(['O-Hex', 'O-Pen']);
    expect(best.formula).toBe('C26H29O15+');
    // The 449 fragment (loss of the pentose) puts the pentose outermost: Hex[Pen] on one position.
    expect(best.topology).toBe('cyanidin[Hex[Pen]]');
  });
});
