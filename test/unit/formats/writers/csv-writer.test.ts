import { describe, expect, it } from 'vitest';
import { CSV_COLUMNS, createCsvWriter } from '../../../../formats/write-csv.js';
import { ALL, BROKEN, CYANIDIN, KAEMPFEROL, run } from './results-fixture.js';

/** A strict RFC 4180 reader (CRLF records, quoted fields, doubled quotes) to read the output back. */
function parseCsv(text: string, sep = ','): string[][] {
  const rows: string[][] = [];
  let row: string[] = [];
  let field = '';
  let i = 0;
  let quoted = false;
  while (i < text.length) {
    const ch = text[i]!;
    if (quoted) {
      if (ch === '"' && text[i + 1] === '"') {
        field += '"';
        i += 2;
      } else if (ch === '"') {
        quoted = false;
        i++;
      } else {
        field += ch;
        i++;
      }
    } else if (ch === '"' && field === '') {
      quoted = true;
      i++;
    } else if (ch === sep) {
      row.push(field);
      field = '';
      i++;
    } else if (ch === '\r' && text[i + 1] === '\n') {
      row.push(field);
      rows.push(row);
      row = [];
      field = '';
      i += 2;
    } else if (ch === '\n' || ch === '\r' || ch === '"') {
      throw new Error(`bare ${JSON.stringify(ch)} at ${i}: not RFC 4180`);
    } else {
      field += ch;
      i++;
    }
  }
  if (field !== '' || row.length > 0) throw new Error('last record not terminated by CRLF');
  return rows;
}

describe('CSV writer', () => {
  it('writes a header row and one row per candidate (one row for a spectrum without candidates)', async () => {
    const rows = parseCsv(await run((out) => createCsvWriter(out)));
    expect(rows[0]).toEqual([...CSV_COLUMNS]);
    const expected = ALL.reduce((n, r) => n + Math.max(1, r.candidates.length), 0);
    expect(rows).toHaveLength(1 + expected);
    for (const r of rows) expect(r).toHaveLength(CSV_COLUMNS.length);
  });

  it('fills the columns from the result', async () => {
    const rows = parseCsv(await run((out) => createCsvWriter(out)));
    const col = (name: (typeof CSV_COLUMNS)[number]) => CSV_COLUMNS.indexOf(name);
    const first = rows[1]!;
    expect(first[col('spectrum_id')]).toBe(CYANIDIN.id);
    expect(first[col('status')]).toBe('annotated');
    expect(first[col('precursor_mz')]).toBe('581.15009');
    expect(first[col('ion_type')]).toBe('[M]+');
    expect(first[col('aglycone_formula')]).toBe('C15H11O6+');
    expect(first[col('formula')]).toBe('C26H29O15+');
    expect(first[col('substituents')]).toBe('Hex(O);Pen(O)');
    expect(first[col('other_topologies')]).toBe('cyanidin[Hex][Pen];cyanidin[Pen[Hex]]');
    expect(first[col('rank')]).toBe('1');
    expect(first[col('confidence_level')]).toBe('3');
    expect(first[col('ruleset_version')]).toBe('1.0.0');
    const kaempferol = rows.find((r) => r[col('spectrum_id')] === KAEMPFEROL.id)!;
    expect(kaempferol[col('aglycone_alternatives')]).toBe('fisetin;luteolin;scutellarein');
    expect(kaempferol[col('charge')]).toBe('-1');
    const tied = rows.filter((r) => r[col('spectrum_id')] === KAEMPFEROL.id).map((r) => r[col('tied')]);
    expect(tied).toEqual(['false', 'true', 'false']);
    const unassigned = rows.find((r) => r[col('status')] === 'unassigned')!;
    expect(unassigned[col('reason_code')]).toBe('no-candidate');
    expect(unassigned[col('rank')]).toBe('');
    expect(unassigned[col('ion_type')]).toBe('');
  });

  it('quotes separators, quotes and line breaks, and guards text cells against formula injection', async () => {
    const text = await run((out) => createCsvWriter(out));
    expect(text).toContain('"\'=HYPERLINK(""x"")"');
    expect(text).toContain('"peak 3: ""NaN"", then\nmore, text"');
    const rows = parseCsv(text);
    const broken = rows.find((r) => r[CSV_COLUMNS.indexOf('status')] === 'error')!;
    expect(broken[0]).toBe(`'${BROKEN.id}`);
    expect(broken[CSV_COLUMNS.indexOf('reason')]).toBe(BROKEN.reason!.message);
  });

  it('leaves numbers alone: a negative ppm stays a number, and no exponent is written', async () => {
    const rows = parseCsv(await run((out) => createCsvWriter(out)));
    const k = rows.filter((r) => r[0] === KAEMPFEROL.id);
    expect(k[0]![CSV_COLUMNS.indexOf('ppm')]).toBe('-1.2');
    expect(k[2]![CSV_COLUMNS.indexOf('score')]).toBe('0');
    for (const r of rows.slice(1)) for (const c of r) expect(c).not.toMatch(/^-?\d+(\.\d+)?e[-+]?\d+$/i);
  });

  it('can use another separator', async () => {
    const rows = parseCsv(await run((out) => createCsvWriter(out, { separator: ';' })), ';');
    expect(rows[0]).toEqual([...CSV_COLUMNS]);
    // "Hex(O);Pen(O)" now holds the separator and must be quoted to survive.
    expect(rows[1]![CSV_COLUMNS.indexOf('substituents')]).toBe('Hex(O);Pen(O)');
  });
});
