import { describe, expect, it } from 'vitest';
import { DISCLAIMER, ResultsDocumentSchema, SpectrumResultSchema } from '../../../../engine/report/result.js';
import { createJsonWriter } from '../../../../formats/write-json.js';
import { createNdjsonWriter } from '../../../../formats/write-ndjson.js';
import { ALL, RULESET, run, slowSink } from './results-fixture.js';

describe('JSON writer', () => {
  it('writes exactly the results document, with the disclaimer, that parses back to the input', async () => {
    const text = await run((out) => createJsonWriter(out));
    const doc = ResultsDocumentSchema.parse(JSON.parse(text));
    expect(doc.ruleset).toEqual(RULESET);
    expect(doc.disclaimer).toBe(DISCLAIMER);
    expect(doc.spectra).toEqual(ALL);
    expect(Object.keys(JSON.parse(text))).toEqual(['ruleset', 'disclaimer', 'spectra']);
  });

  it('writes a valid document with no spectra, and in pretty form', async () => {
    expect(JSON.parse(await run((out) => createJsonWriter(out), []))).toEqual({
      ruleset: RULESET,
      disclaimer: DISCLAIMER,
      spectra: [],
    });
    const pretty = await run((out) => createJsonWriter(out, { pretty: true }));
    expect(JSON.parse(pretty).spectra).toEqual(ALL);
    expect(pretty.split('\n').length).toBeGreaterThan(50);
  });

  it('waits for a slow stream and loses nothing', async () => {
    const sink = slowSink();
    const w = createJsonWriter(sink.out);
    await w.begin(RULESET);
    for (let i = 0; i < 200; i++) await w.write({ ...ALL[i % 4]!, id: `S${i}` });
    await w.end();
    const doc = ResultsDocumentSchema.parse(JSON.parse(sink.text()));
    expect(doc.spectra.map((s) => s.id)).toEqual(Array.from({ length: 200 }, (_, i) => `S${i}`));
  });

  it('refuses calls out of order, with code writer-state', async () => {
    const w = createJsonWriter(slowSink().out);
    await expect(w.write(ALL[0]!)).rejects.toMatchObject({ code: 'writer-state' });
    await w.begin(RULESET);
    await expect(w.begin(RULESET)).rejects.toMatchObject({ code: 'writer-state' });
    await w.end();
    await expect(w.write(ALL[0]!)).rejects.toMatchObject({ code: 'writer-state' });
  });
});

describe('NDJSON writer', () => {
  it('writes a header line, one line per spectrum and a footer with the count', async () => {
    const text = await run((out) => createNdjsonWriter(out));
    expect(text.endsWith('\n')).toBe(true);
    const lines = text.trimEnd().split('\n');
    expect(lines).toHaveLength(ALL.length + 2);
    const objects = lines.map((l) => JSON.parse(l));
    expect(objects[0]).toEqual({ type: 'header', layout: 1, ruleset: RULESET, disclaimer: DISCLAIMER });
    objects.slice(1, -1).forEach((o, i) => {
      expect(o.type).toBe('spectrum');
      const { type: _type, ...rest } = o;
      expect(SpectrumResultSchema.parse(rest)).toEqual(ALL[i]);
    });
    expect(objects.at(-1)).toEqual({ type: 'footer', spectra: ALL.length });
  });
});
