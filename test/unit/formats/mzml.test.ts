import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import type { Spectrum } from '../../../engine/spectrum/spectrum.js';
import { createMzmlStats, readMzml } from '../../../formats/mzml.js';
import { writeMzml } from '../../helpers/write-mzml.js';
import { chunked, collect, errors, expectSchemaValid, rng, spectra } from './read-helpers.js';

const TINY = 'test/fixtures/mzml/tiny.pwiz.1.1.mzML';
const read = (doc: string | Buffer, chunk = 13) => collect(readMzml(chunked(doc, chunk), { file: 'x.mzML' }));
const summary = (items: Awaited<ReturnType<typeof read>>) =>
  items.map((i) => (i.kind === 'spectrum' ? `ok ${i.spectrum.id}` : `${i.issue.code} ${i.id ?? i.index}`));

/** Simulated MS2 spectra (seeded), for round trips. */
function simulated(n: number, seed: number): Spectrum[] {
  const r = rng(seed);
  return Array.from({ length: n }, (_, i) => {
    const mz = 200 + r() * 1000;
    const peaks: [number, number][] = [];
    let x = 50 + r() * 10;
    const count = 1 + Math.floor(r() * 40);
    for (let k = 0; k < count; k++) {
      x += 0.01 + r() * 20;
      peaks.push([x, r() * 1e6]);
    }
    const negative = i % 3 === 2;
    return {
      id: `controllerType=0 controllerNumber=1 scan=${i + 1}`,
      precursor: { mz, charge: (negative ? -1 : 1) * (1 + (i % 2)), intensity: r() * 1e7 },
      polarity: negative ? 'negative' : 'positive',
      rt: r() * 3600,
      peaks,
    };
  });
}

describe('readMzml on the HUPO-PSI mzML 1.1 example (tiny.pwiz.1.1.mzML)', () => {
  // Outside check: the example file published with the HUPO-PSI mzML 1.1 specification (HUPO-PSI/mzML,
  // examples/); expected values are read from the file's own text.
  const text = readFileSync(TINY, 'latin1');

  it('yields its one MS2 spectrum with the precursor, charge, time and peaks the file states', async () => {
    const stats = createMzmlStats();
    const items = await collect(readMzml(chunked(readFileSync(TINY), 101), { stats }));
    expectSchemaValid(items);
    expect(items).toHaveLength(1);
    const [item] = spectra(items);
    expect(item!.index).toBe(1);
    const s = item!.spectrum;
    expect(s.id).toBe('scan=20');
    // <cvParam accession="MS:1000744" name="selected ion m/z" value="445.33999999999997"/>, charge state 2,
    // peak intensity 120053; the MS2 parameter group says positive scan.
    expect(s.precursor).toEqual({ mz: 445.33999999999997, charge: 2, intensity: 120053 });
    expect(s.polarity).toBe('positive');
    // scan start time 5.9904999999999999 minutes (UO:0000031).
    expect(s.rt).toBeCloseTo(5.9904999999999999 * 60, 9);
    expect(s.metadata).toEqual({ collisionEnergy: 35, activation: 'collision-induced dissociation' });
    // The arrays of scan=20 as written in the file (64-bit, uncompressed), decoded here independently.
    const block = text.slice(text.indexOf('id="scan=20"'), text.indexOf('id="scan=21"'));
    const [mzB64, intB64] = [...block.matchAll(/<binary>([^<]*)<\/binary>/g)].map((m) => m[1]!);
    const decode = (b64: string) => {
      const b = Buffer.from(b64, 'base64');
      return Array.from({ length: b.length / 8 }, (_, i) => b.readDoubleLE(i * 8));
    };
    const mzs = decode(mzB64!);
    const ints = decode(intB64!);
    expect(mzs).toHaveLength(10); // defaultArrayLength="10"
    // The file's first point sits at m/z 0, which is no ion: it is dropped with a warning.
    expect(mzs[0]).toBe(0);
    expect(s.peaks).toEqual(mzs.slice(1).map((m, i) => [m, ints[i + 1]]));
    expect(s.peaks[0]).toEqual([2, 18]);
    expect(item!.warnings.map((w) => w.code).sort()).toEqual(['bad-peak', 'profile-data']);
    // Three MS1 spectra (scan=19, scan=21 with no data, and the WIFF one) are skipped without items.
    expect(stats).toEqual({ spectra: 4, read: 1, errors: 0, skipped: { '1': 3 } });
  });

  it('reads the same from a string, from big chunks and from 1-byte chunks', async () => {
    const a = await collect(readMzml(text));
    const b = await collect(readMzml(chunked(readFileSync(TINY), 1)));
    const c = await collect(readMzml(chunked(readFileSync(TINY), 1 << 20)));
    expect(b).toEqual(a);
    expect(c).toEqual(a);
  });
});

describe('readMzml round trips through the test writer', () => {
  const input = simulated(25, 7);
  const combos = [
    { compression: 'zlib', precision: 64, indexed: true, ms1: true, paramGroups: true },
    { compression: 'none', precision: 64, indexed: false, ms1: false, paramGroups: false },
    { compression: 'zlib', precision: 32, indexed: false, ms1: true, paramGroups: false },
    { compression: 'none', precision: 32, indexed: true, ms1: false, paramGroups: true, rtUnit: 'minute' },
  ] as const;

  for (const options of combos) {
    it(`reads back ${JSON.stringify(options)}`, async () => {
      const stats = createMzmlStats();
      const items = await collect(readMzml(chunked(writeMzml(input, options), 97), { stats }));
      expectSchemaValid(items);
      expect(errors(items)).toEqual([]);
      const out = spectra(items).map((i) => i.spectrum);
      expect(out.map((s) => s.id)).toEqual(input.map((s) => s.id));
      expect(stats.skipped).toEqual(options.ms1 ? { '1': input.length } : {});
      out.forEach((s, i) => {
        const want = input[i]!;
        expect(s.precursor).toEqual(want.precursor);
        expect(s.polarity).toBe(want.polarity);
        if (options.precision === 64) {
          // 64-bit: exactly the numbers written.
          expect(s.peaks).toEqual(want.peaks);
        } else {
          // 32-bit: each number rounded to the nearest float32, nothing more.
          expect(s.peaks).toEqual(want.peaks.map(([m, y]) => [Math.fround(m), Math.fround(y)]));
        }
        if ('rtUnit' in options) expect(s.rt).toBeCloseTo(want.rt!, 9);
        else expect(s.rt).toBe(want.rt);
      });
    });
  }
});

describe('readMzml on text encodings', () => {
  it('keeps multi-byte UTF-8 ids whole across chunk edges', async () => {
    const s = simulated(2, 5).map((x, i) => ({ ...x, id: `glucoside-β-${i} (simulé)` }));
    const items = await read(writeMzml(s, { indexed: true }), 1);
    expect(spectra(items).map((i) => i.spectrum.id)).toEqual([
      'glucoside-β-0 (simulé)',
      'glucoside-β-1 (simulé)',
    ]);
  });
});

describe('readMzml on bad input', () => {
  const three = simulated(3, 11).map((s, i) => ({
    ...s,
    id: `s${i}`,
    polarity: 'positive' as const,
    precursor: { ...s.precursor, charge: 1 },
  }));
  const doc = writeMzml(three, { compression: 'zlib', precision: 64 });
  /** The document with spectrum s1's XML changed. */
  const breakS1 = (edit: (xml: string) => string) => {
    const start = doc.indexOf('<spectrum index="1"');
    const end = doc.indexOf('</spectrum>', start) + '</spectrum>'.length;
    return doc.slice(0, start) + edit(doc.slice(start, end)) + doc.slice(end);
  };
  const expectOnlyS1 = async (broken: string | Buffer, code: string) => {
    const items = await read(broken);
    expectSchemaValid(items);
    expect(summary(items)).toEqual(['ok s0', `${code} s1`, 'ok s2']);
    const e = errors(items)[0]!;
    expect(e.index).toBe(1);
    expect(e.issue.position).toMatchObject({ file: 'x.mzML', index: 1, id: 's1' });
    expect(e.issue.position.line).toBeGreaterThan(1);
    return e;
  };

  it('reports MS-Numpress as unsupported-encoding and goes on', async () => {
    const broken = writeMzml(three, {
      arrayExtra: (i) =>
        i === 1
          ? '\n<cvParam cvRef="MS" accession="MS:1002312" name="MS-Numpress linear prediction compression" value=""/>'
          : '',
    });
    const e = await expectOnlyS1(broken, 'unsupported-encoding');
    expect(e.issue.message).toContain('MS-Numpress');
    // 32-bit integers are no supported data type either.
    await expectOnlyS1(
      breakS1((x) => x.replace('MS:1000523', 'MS:1000519')),
      'unsupported-encoding',
    );
  });

  it('reports bad base64 and corrupt zlib data as bad-binary', async () => {
    await expectOnlyS1(
      breakS1((x) => x.replace(/<binary>[^<]*</, '<binary>@@not*base64@@<')),
      'bad-binary',
    );
    await expectOnlyS1(
      breakS1((x) =>
        x.replace(/<binary>[^<]*</, `<binary>${Buffer.from('definitely not zlib data').toString('base64')}<`),
      ),
      'bad-binary',
    );
    // 12 bytes is no whole number of 64-bit values.
    await expectOnlyS1(
      breakS1((x) =>
        x.replace(/MS:1000574/g, 'MS:1000576').replace(/<binary>[^<]*</, '<binary>AAAAAAAAAAAAAAAA<'),
      ),
      'bad-binary',
    );
  });

  it('reports an array length that differs from defaultArrayLength', async () => {
    await expectOnlyS1(
      breakS1((x) => x.replace(/defaultArrayLength="\d+"/, 'defaultArrayLength="999"')),
      'array-length-mismatch',
    );
  });

  it('reports NaN, infinite and negative values', async () => {
    const bad = (edit: (s: Spectrum) => void) => {
      const copy = structuredClone(three);
      edit(copy[1]!);
      return writeMzml(copy);
    };
    await expectOnlyS1(
      bad((s) => {
        s.peaks[0]![1] = Number.NaN;
      }),
      'bad-peak',
    );
    await expectOnlyS1(
      bad((s) => {
        s.peaks[0]![0] = Number.POSITIVE_INFINITY;
      }),
      'bad-peak',
    );
    await expectOnlyS1(
      bad((s) => {
        s.peaks[0]![1] = -3;
      }),
      'bad-peak',
    );
    await expectOnlyS1(
      bad((s) => {
        s.peaks[0]![0] = -100;
      }),
      'bad-peak',
    );
    await expectOnlyS1(
      breakS1((x) => x.replace(/(accession="MS:1000744"[^>]*value=")[^"]*/, '$1NaN')),
      'bad-precursor',
    );
    await expectOnlyS1(
      breakS1((x) => x.replace(/(accession="MS:1000744"[^>]*value=")[^"]*/, '$1-445.3')),
      'bad-precursor',
    );
    await expectOnlyS1(
      breakS1((x) => x.replace(/(accession="MS:1000016"[^>]*value=")[^"]*/, '$1NaN')),
      'bad-value',
    );
  });

  it('reports a missing precursor', async () => {
    await expectOnlyS1(
      breakS1((x) => x.replace(/<precursorList[\s\S]*<\/precursorList>/, '')),
      'missing-precursor',
    );
    await expectOnlyS1(
      breakS1((x) => x.replace(/<cvParam[^>]*MS:1000744[^>]*\/>/, '')),
      'missing-precursor',
    );
  });

  it('reports an absurd charge', async () => {
    for (const z of ['12', '0', '2.5', 'two']) {
      await expectOnlyS1(
        breakS1((x) => x.replace(/(accession="MS:1000041"[^>]*value=")[^"]*/, `$1${z}`)),
        'bad-charge',
      );
    }
  });

  it('reports garbage bytes inside a spectrum as syntax and reads the next spectrum', async () => {
    const start = doc.indexOf('<scanList', doc.indexOf('<spectrum index="1"'));
    const junk = Buffer.from([0x00, 0x3c, 0x21, 0xff, 0x26, 0x01, 0x3c, 0x2f, 0x71, 0x3e, 0x80]);
    const broken = Buffer.concat([Buffer.from(doc.slice(0, start)), junk, Buffer.from(doc.slice(start))]);
    await expectOnlyS1(broken, 'syntax');
    // An unclosed stray element inside the spectrum.
    await expectOnlyS1(
      breakS1((x) => x.replace('<scanList', '<junk><scanList')),
      'syntax',
    );
  });

  it('reads every spectrum after garbage between spectra, with a warning on the next one', async () => {
    const at = doc.indexOf('<spectrum index="1"');
    const junk = Buffer.from([0x3c, 0x21, 0x00, 0xff, 0x3c, 0x2f, 0x7a, 0x3e, 0x0a]);
    const broken = Buffer.concat([Buffer.from(doc.slice(0, at)), junk, Buffer.from(doc.slice(at))]);
    const items = await read(broken);
    expect(summary(items)).toEqual(['ok s0', 'ok s1', 'ok s2']);
    expect(spectra(items)[1]!.warnings[0]).toMatchObject({ code: 'syntax', severity: 'warning' });
  });

  it('skips a spectrum longer than maxSpectrumLength without holding it', async () => {
    const big = three.map((s, i) =>
      i === 1
        ? {
            ...s,
            peaks: simulated(1, 3)[0]!
              .peaks.concat(s.peaks)
              .sort((a, b) => a[0] - b[0]),
          }
        : s,
    );
    const text = writeMzml(big, { compression: 'none' });
    const limit =
      text.indexOf('</spectrum>', text.indexOf('<spectrum index="1"')) -
      text.indexOf('<spectrum index="1"') -
      50;
    const items = await collect(readMzml(chunked(text, 64), { maxSpectrumLength: limit }));
    expect(summary(items)).toEqual(['ok s0', 'too-large s1', 'ok s2']);
  });

  it('refuses more peaks than the schema allows (200,000)', async () => {
    const many: [number, number][] = Array.from({ length: 200_001 }, (_, i) => [100 + i * 0.001, 1]);
    await expectOnlyS1(writeMzml(three.map((s, i) => (i === 1 ? { ...s, peaks: many } : s))), 'too-large');
  });

  it('reports a truncated file inside a spectrum and between spectra', async () => {
    const cut = doc.slice(0, doc.indexOf('<binary>', doc.indexOf('<spectrum index="2"')) + 20);
    const items = await read(cut);
    expect(summary(items)).toEqual(['ok s0', 'ok s1', 'truncated s2']);
    const between = doc.slice(0, doc.indexOf('<spectrum index="2"'));
    const items2 = await read(between);
    expect(summary(items2)).toEqual(['ok s0', 'ok s1', 'truncated 2']);
    expect(errors(items2)[0]!.issue.message).toContain('2 spectra of the 3 announced');
    const early = await read(doc.slice(0, 300));
    expect(summary(early)).toEqual(['truncated 0']);
    // Cut after the spectrum list (in the index of an indexed file): nothing is lost, nothing to report.
    const indexed = writeMzml(three, { indexed: true });
    expect(summary(await read(indexed.slice(0, indexed.indexOf('<indexList') + 30)))).toEqual([
      'ok s0',
      'ok s1',
      'ok s2',
    ]);
  });

  it('reports input that is not mzML with one syntax error', async () => {
    expect(summary(await read('BEGIN IONS\nTITLE=a\nEND IONS\n'))).toEqual(['syntax 0']);
    expect(summary(await read('<?xml version="1.0"?><html><body/></html>'))).toEqual(['syntax 0']);
    expect(summary(await read(''))).toEqual(['syntax 0']);
    expect(summary(await read(Buffer.from([0xff, 0xd8, 0xff, 0xe0, 0, 0x10])))).toEqual(['syntax 0']);
  });

  it('yields an MS2 spectrum without peaks with a no-peaks warning', async () => {
    const empty = writeMzml([{ ...three[0]!, peaks: [] }]);
    const [item] = await read(empty);
    expect(item!.kind).toBe('spectrum');
    expect(item!.kind === 'spectrum' && item!.warnings.map((w) => w.code)).toEqual(['no-peaks']);
  });

  it('sorts unsorted peaks with a warning, and takes the first of several possible charges', async () => {
    const s = { ...three[0]!, peaks: [...three[0]!.peaks].reverse() };
    const unsortedDoc = writeMzml([s]).replace(
      /<cvParam[^>]*MS:1000041[^>]*\/>/,
      '<cvParam cvRef="MS" accession="MS:1000633" name="possible charge state" value="2"/><cvParam cvRef="MS" accession="MS:1000633" name="possible charge state" value="3"/>',
    );
    const [item] = await read(unsortedDoc);
    if (item!.kind !== 'spectrum') throw new Error('expected a spectrum');
    expect(item!.spectrum.peaks).toEqual(three[0]!.peaks);
    expect(item!.spectrum.precursor.charge).toBe(2);
    expect(item!.warnings.map((w) => w.code).sort()).toEqual(['ambiguous-charge', 'unsorted-peaks']);
  });
});
