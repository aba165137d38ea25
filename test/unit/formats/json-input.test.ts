import { readFileSync } from 'node:fs';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { SpectrumSchema } from '../../../engine/spectrum/spectrum.js';
import { peaksValid, readJsonSpectra } from '../../../formats/json-input.js';
import { chunked, collect, errors, expectSchemaValid, spectra } from './read-helpers.js';

const FIXTURES = 'test/fixtures/json';
const read = (text: string | Buffer, chunk = 5) =>
  collect(readJsonSpectra(chunked(text, chunk), { file: 'x.json' }));
const summary = (items: Awaited<ReturnType<typeof read>>) =>
  items.map((i) => (i.kind === 'spectrum' ? `ok ${i.spectrum.id}` : `${i.issue.code} ${i.id ?? i.index}`));

describe('readJsonSpectra', () => {
  it('reads an array of spectra', async () => {
    const items = await read(readFileSync(`${FIXTURES}/simulated-spectra.json`));
    expectSchemaValid(items);
    expect(summary(items)).toEqual(['ok sim-cy3glc', 'ok sim-q3glc-neg']);
    const [a, b] = spectra(items);
    expect(a!.spectrum).toEqual({
      id: 'sim-cy3glc',
      precursor: { mz: 449.10784, charge: 1 },
      polarity: 'positive',
      rt: 312.5,
      peaks: [
        [287.05501, 1000000],
        [449.10784, 120000],
      ],
      metadata: { lambdaMaxNm: 520, note: 'simulated' },
    });
    expect(b!.spectrum.peaks).toEqual([
      [300.02755, 40000],
      [301.03538, 100000],
    ]);
    expect(b!.warnings.map((w) => w.code)).toEqual(['unsorted-peaks']);
  });

  it('reads { "spectra": [...] } with pointers into it', async () => {
    const items = await read(readFileSync(`${FIXTURES}/simulated-wrapped.json`));
    expectSchemaValid(items);
    expect(summary(items)).toEqual(['ok w1', 'ok w2', 'missing-precursor w3']);
    expect(spectra(items)[1]!.warnings[0]).toMatchObject({
      code: 'unknown-key',
      position: { path: '/spectra/1/colour' },
    });
    expect(errors(items)[0]!.issue.position).toMatchObject({
      file: 'x.json',
      index: 2,
      id: 'w3',
      path: '/spectra/2/precursor/mz',
    });
  });

  it('streams NDJSON: one error item per bad line, with line and pointer, the rest read', async () => {
    const items = await read(readFileSync(`${FIXTURES}/simulated-bad.ndjson`));
    expectSchemaValid(items);
    expect(summary(items)).toEqual([
      'ok good-1',
      'syntax 1',
      'missing-precursor no-precursor',
      'bad-charge absurd-charge',
      'bad-peak negative-intensity',
      'bad-precursor huge-mz',
      'bad-peak nan-as-string',
      'ok good-2',
    ]);
    const lines = items.map((i) => (i.kind === 'error' ? i.issue.position.line : undefined));
    expect(lines).toEqual([undefined, 2, 3, 4, 5, 7, 8, undefined]);
    const e = errors(items);
    expect(e[2]!.issue.position.path).toBe('/precursor/charge');
    expect(e[3]!.issue.position.path).toBe('/peaks/0/1');
    expect(e[5]!.issue.position.path).toBe('/peaks/0/0');
    expect(items.map((i) => i.index)).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
  });

  it('reads one-line documents and single spectra, and NDJSON whose first line is broken', async () => {
    const one = '{"id":"a","precursor":{"mz":300},"peaks":[[100,1]]}';
    expect(summary(await read(one))).toEqual(['ok a']);
    expect(summary(await read(`{"spectra":[${one},${one.replace('"a"', '"b"')}]}`))).toEqual([
      'ok a',
      'ok b',
    ]);
    expect(summary(await read(`[${one}]`))).toEqual(['ok a']);
    expect(summary(await read(`{\n  "id": "p",\n  "precursor": {"mz": 300},\n  "peaks": []\n}\n`))).toEqual([
      'ok p',
    ]);
    expect(summary(await read(`{"id":"x","precursor":\n${one}\n${one.replace('"a"', '"c"')}\n`))).toEqual([
      'syntax 0',
      'ok a',
      'ok c',
    ]);
  });

  it('reports malformed, truncated and non-spectrum documents as one syntax error with a line', async () => {
    const truncated = readFileSync(`${FIXTURES}/simulated-spectra.json`, 'utf8').slice(0, 200);
    const t = await read(truncated);
    expect(summary(t)).toEqual(['syntax 0']);
    expect(summary(await read('[1, 2,\n 3,, 4]'))).toEqual(['syntax 0']);
    expect(summary(await read('{"hello": "world"}\n'))).toEqual(['invalid-spectrum 0']);
    expect(summary(await read('"just a string"'))).toEqual(['syntax 0']);
    expect(summary(await read(''))).toEqual(['syntax 0']);
    expect(summary(await read(Buffer.from([0x5b, 0x00, 0xff, 0xfe])))).toEqual(['syntax 0']);
    expect(summary(await read('[{"id":"a","precursor":{"mz":300},"peaks":[[100,1]]}, 42]'))).toEqual([
      'ok a',
      'invalid-spectrum 1',
    ]);
  });

  it('refuses a whole document beyond maxDocumentLength and suggests NDJSON', async () => {
    const big = `[${Array.from({ length: 200 }, (_, i) => `{"id":"s${i}","precursor":{"mz":300},"peaks":[[100,1]]}`).join(',\n')}]`;
    const items = await collect(readJsonSpectra(chunked(big, 100), { maxDocumentLength: 1000 }));
    expect(summary(items)).toEqual(['too-large 0']);
    expect(errors(items)[0]!.issue.message).toContain('NDJSON');
  });
});

describe('the peak-list fast path', () => {
  // peaksValid may only accept what the schema accepts (the schema gives every error message).
  const value = fc.oneof(
    fc.double(),
    fc.constantFrom(
      0,
      -0,
      1,
      Number.NaN,
      Number.POSITIVE_INFINITY,
      Number.NEGATIVE_INFINITY,
      Number.MAX_VALUE,
      5e-324,
    ),
    fc.string({ maxLength: 3 }),
    fc.constant(null),
    fc.boolean(),
  );
  const peak = fc.oneof(
    fc.tuple(value, value),
    fc.array(value, { maxLength: 4 }),
    fc.tuple(fc.double({ min: 1e-3, max: 1e4, noNaN: true }), fc.double({ min: 0, max: 1e9, noNaN: true })),
    value,
  );
  it('agrees with SpectrumSchema on random peak lists', () => {
    fc.assert(
      fc.property(fc.array(peak, { maxLength: 6 }), (peaks) => {
        const schema = SpectrumSchema.safeParse({ id: 'a', precursor: { mz: 300 }, peaks }).success;
        expect(peaksValid(peaks)).toBe(schema);
      }),
      { numRuns: 3000 },
    );
  });
});
