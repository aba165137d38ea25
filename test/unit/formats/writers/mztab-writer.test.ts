import { mkdtemp, readdir, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ELECTRON_MASS } from '../../../../engine/chem/elements.js';
import { formulaMz, parseFormula } from '../../../../engine/chem/formula.js';
import type { SpectrumResult } from '../../../../engine/report/result.js';
import { loadDefaultRuleSet } from '../../../../formats/ruleset-file.js';
import { createMzTabWriter, SME_COLUMNS, SMF_COLUMNS, SML_COLUMNS } from '../../../../formats/write-mztab.js';
import { ALL, CYANIDIN, KAEMPFEROL, run } from './results-fixture.js';

const PREFIXES = ['MTD', 'SMH', 'SML', 'SFH', 'SMF', 'SEH', 'SME', 'COM'];

/** Mandatory metadata of mzTab-M 2.0 §6.2 for a file with SMF and SME sections. */
const MANDATORY_MTD = [
  'mzTab-version',
  'mzTab-ID',
  'software[1]',
  'quantification_method',
  'ms_run[1]-location',
  'ms_run[1]-scan_polarity[1]',
  'assay[1]',
  'assay[1]-ms_run_ref',
  'study_variable[1]',
  'study_variable[1]-assay_refs',
  'study_variable[1]-description',
  'cv[1]-label',
  'cv[1]-full_name',
  'cv[1]-version',
  'cv[1]-uri',
  'database[1]',
  'database[1]-prefix',
  'database[1]-version',
  'database[1]-uri',
  'small_molecule-quantification_unit',
  'small_molecule_feature-quantification_unit',
  'id_confidence_measure[1]',
];

interface Parsed {
  lines: string[];
  mtd: Map<string, string>;
  mtdOrder: string[];
  tables: Record<'SML' | 'SMF' | 'SME', Record<string, string>[]>;
  headers: Record<'SMH' | 'SFH' | 'SEH', string[]>;
}

/** Reads an mzTab-M file back, asserting its structure on the way. */
function parseMzTab(text: string): Parsed {
  const lines = text.split('\n');
  expect(lines.at(-1)).toBe('');
  const mtd = new Map<string, string>();
  const mtdOrder: string[] = [];
  const headers = {} as Parsed['headers'];
  const tables: Parsed['tables'] = { SML: [], SMF: [], SME: [] };
  const order: string[] = [];
  const headerOf = { SML: 'SMH', SMF: 'SFH', SME: 'SEH' } as const;
  lines.slice(0, -1).forEach((line, i) => {
    if (line === '') return;
    const cells = line.split('\t');
    const prefix = cells[0]!;
    expect(PREFIXES, `line ${i + 1}`).toContain(prefix);
    if (order.at(-1) !== prefix) order.push(prefix);
    if (prefix === 'MTD') {
      expect(cells, `line ${i + 1}`).toHaveLength(3);
      expect(mtd.has(cells[1]!), `MTD ${cells[1]} twice`).toBe(false);
      mtd.set(cells[1]!, cells[2]!);
      mtdOrder.push(cells[1]!);
    } else if (prefix === 'SMH' || prefix === 'SFH' || prefix === 'SEH') {
      expect(headers[prefix], `${prefix} twice`).toBeUndefined();
      headers[prefix] = cells.slice(1);
    } else if (prefix === 'SML' || prefix === 'SMF' || prefix === 'SME') {
      const header = headers[headerOf[prefix]];
      expect(header, `${prefix} before its header`).toBeDefined();
      expect(cells.length - 1, `line ${i + 1}: columns`).toBe(header.length);
      for (const c of cells) expect(c, `line ${i + 1}: empty cell`).not.toBe('');
      tables[prefix].push(Object.fromEntries(header.map((h, k) => [h, cells[k + 1]!])));
    }
  });
  expect(order).toEqual(['MTD', 'SMH', 'SML', 'SFH', 'SMF', 'SEH', 'SME']);
  // A blank line separates the sections.
  for (const h of ['SMH', 'SFH', 'SEH']) {
    const at = lines.findIndex((l) => l.startsWith(`${h}\t`));
    expect(lines[at - 1]).toBe('');
  }
  return { lines, mtd, mtdOrder, tables, headers };
}

let tmp: string;
beforeAll(async () => {
  tmp = await mkdtemp(join(tmpdir(), 'peel-mztab-test-'));
});
afterAll(async () => {
  await rm(tmp, { recursive: true, force: true });
});

describe('mzTab-M writer', () => {
  it('writes the four sections with every mandatory metadata key, in the order of the specification', async () => {
    const p = parseMzTab(await run((out) => createMzTabWriter(out, { softwareVersion: '0.1.0' })));
    for (const key of MANDATORY_MTD) expect(p.mtd.has(key), key).toBe(true);
    expect(p.mtd.get('mzTab-version')).toBe('2.0.0-M');
    expect(p.mtd.get('software[1]')).toBe('[,,Peel, 0.1.0]');
    expect(p.mtd.get('database[1]-version')).toBe('1.0.0');
    expect(p.mtd.get('description')).toContain('Putative');
    expect(p.mtd.get('small_molecule-identification_reliability')).toContain('MS:1002955');
    // Key families appear in the order §6.2 lists them.
    const family = (k: string) =>
      k.startsWith('mzTab-') ? k : k.replace(/\[\d+\]/g, '[]').replace(/-.*$/, '');
    const wanted = [
      'mzTab-version',
      'mzTab-ID',
      'description',
      'software[]',
      'quantification_method',
      'ms_run[]',
      'assay[]',
      'study_variable[]',
      'cv[]',
      'database[]',
      'small_molecule',
      'small_molecule_feature',
      'id_confidence_measure[]',
      'colunit',
    ];
    const seen = [...new Set(p.mtdOrder.map(family))];
    expect(seen).toEqual(wanted);
    // The mixed polarity of the spectra is reported for the run.
    expect(p.mtd.get('ms_run[1]-scan_polarity[1]')).toContain('MS:1000129');
    expect(p.mtd.get('ms_run[1]-scan_polarity[2]')).toContain('MS:1000130');
  });

  it('uses the column order of the specification, optional columns last', async () => {
    const p = parseMzTab(await run((out) => createMzTabWriter(out)));
    expect(p.headers.SMH.slice(0, SML_COLUMNS.length)).toEqual([...SML_COLUMNS]);
    expect(p.headers.SMH.slice(SML_COLUMNS.length, SML_COLUMNS.length + 3)).toEqual([
      'abundance_assay[1]',
      'abundance_study_variable[1]',
      'abundance_variation_study_variable[1]',
    ]);
    expect(p.headers.SFH.slice(0, SMF_COLUMNS.length + 1)).toEqual([...SMF_COLUMNS, 'abundance_assay[1]']);
    expect(p.headers.SEH.slice(0, SME_COLUMNS.length + 3)).toEqual([
      ...SME_COLUMNS,
      'id_confidence_measure[1]',
      'id_confidence_measure[2]',
      'rank',
    ]);
    for (const h of [p.headers.SMH, p.headers.SFH, p.headers.SEH]) {
      const firstOpt = h.findIndex((c) => c.startsWith('opt_'));
      expect(h.slice(firstOpt).every((c) => /^opt_global_[A-Za-z0-9_\-[\]:]+$/.test(c))).toBe(true);
    }
  });

  it('writes one SML per annotated spectrum, one SMF per precursor, one SME per candidate, cross-referenced', async () => {
    const p = parseMzTab(await run((out) => createMzTabWriter(out)));
    expect(p.tables.SML).toHaveLength(ALL.filter((r) => r.status === 'annotated').length);
    expect(p.tables.SMF).toHaveLength(ALL.filter((r) => r.precursor).length);
    // One evidence row per name that fits a candidate: its aglycone and each same-formula alternative.
    const names = ALL.flatMap((r) => r.candidates).reduce(
      (n, c) => n + 1 + c.aglycone.alternatives.length,
      0,
    );
    expect(p.tables.SME).toHaveLength(names);
    const smeIds = new Set(p.tables.SME.map((r) => r.SME_ID));
    const smfIds = new Set(p.tables.SMF.map((r) => r.SMF_ID));
    for (const f of p.tables.SMF) {
      if (f.SME_ID_REFS !== 'null') for (const id of f.SME_ID_REFS!.split('|')) expect(smeIds).toContain(id);
      expect(f.SME_ID_REF_ambiguity_code).toBe(f.SME_ID_REFS!.includes('|') ? '1' : 'null');
    }
    for (const s of p.tables.SML) for (const id of s.SMF_ID_REFS!.split('|')) expect(smfIds).toContain(id);
    // Numbers are xs:decimal: no exponent anywhere in the tables.
    for (const row of [...p.tables.SML, ...p.tables.SMF, ...p.tables.SME]) {
      for (const v of Object.values(row)) expect(v).not.toMatch(/^-?\d+(\.\d+)?e[-+]?\d+$/i);
    }
  });

  it('reports the cyanidin glycoside: cation formula, masses, ion type, reliability, spectrum reference', async () => {
    const p = parseMzTab(await run((out) => createMzTabWriter(out, { msRuns: [{ format: 'mgf' }] })));
    const sml = p.tables.SML.find((r) => r.opt_global_spectrum_id === CYANIDIN.id)!;
    expect(sml.chemical_formula).toBe('C26H29O15+');
    expect(sml.chemical_name).toBe('cyanidin + Hex + Pen');
    expect(sml.database_identifier).toBe('ruleset:cyanidin');
    // The m/z of the flavylium ion plus one electron mass (CODATA 2018) is the mass of its atoms.
    const ion = formulaMz(parseFormula('C26H29O15+'));
    expect(Number(sml.theoretical_neutral_mass)).toBeCloseTo(ion + ELECTRON_MASS, 6);
    expect(sml.adduct_ions).toBe('[M]+');
    expect(sml.reliability).toBe('3');
    expect(sml.best_id_confidence_value).toBe('12.7');
    const sme = p.tables.SME.filter((r) => r.opt_global_spectrum_id === CYANIDIN.id);
    expect(sme.map((r) => r.rank)).toEqual(['1', '2']);
    expect(Number(sme[0]!.theoretical_mass_to_charge)).toBeCloseTo(ion, 6);
    expect(sme[0]!.spectra_ref).toBe('ms_run[1]:index=0');
    expect(sme[0]!.ms_level).toBe('[MS, MS:1000511, ms level, 2]');
    expect(sme[0]!.charge).toBe('1');
    const smf = p.tables.SMF.find((r) => r.opt_global_spectrum_id === CYANIDIN.id)!;
    expect(smf.retention_time_in_seconds).toBe('312.5');
    expect(smf.exp_mass_to_charge).toBe('581.15009');
    expect(p.mtd.get('ms_run[1]-id_format')).toContain('MS:1000774');
  });

  it('lists ties with "|" in every identity column, and tied evidence shares a rank', async () => {
    const p = parseMzTab(await run((out) => createMzTabWriter(out)));
    const sml = p.tables.SML.find((r) => r.opt_global_spectrum_id === KAEMPFEROL.id)!;
    const columns = ['database_identifier', 'chemical_formula', 'smiles', 'inchi', 'chemical_name', 'uri'];
    const counts = [...columns, 'theoretical_neutral_mass'].map((c) => sml[c]!.split('|').length);
    // kaempferol and its three same-formula alternatives, plus the tied unknown aglycone.
    expect(counts).toEqual(Array(7).fill(5));
    expect(sml.chemical_name!.split('|')).toEqual([
      'kaempferol + Hex',
      'fisetin + Hex',
      'luteolin + Hex',
      'scutellarein + Hex',
      'unknown + Hex (C-linked)',
    ]);
    expect(sml.database_identifier!.split('|').at(-1)).toBe('ruleset:null');
    // [M-H]- of C21H20O11: the neutral molecule is reported.
    expect(sml.chemical_formula!.split('|')[0]).toBe('C21H20O11');
    expect(Number(sml.theoretical_neutral_mass!.split('|')[0])).toBeCloseTo(448.10056, 5);
    const ranks = p.tables.SME.filter((r) => r.opt_global_spectrum_id === KAEMPFEROL.id).map((r) => r.rank);
    expect(ranks).toEqual(['1', '1', '1', '1', '1', '3']);
    expect(p.tables.SME.find((r) => r.opt_global_spectrum_id === KAEMPFEROL.id)!.charge).toBe('1');
  });

  it('gives each tied candidate the molecule of its own ion type (cyanidin glucoside+ vs kaempferol glucoside [M+H]+)', async () => {
    // REFERENCE.md §3: cyanidin 3-glucoside+ and kaempferol 3-glucoside [M+H]+ are both C21H21O11+, 449.10784.
    const base = CYANIDIN.candidates[0]!;
    const tie: SpectrumResult = {
      ...CYANIDIN,
      id: 'TIE',
      precursor: { mz: 449.10784, charge: 1, ionType: '[M]+' },
      candidates: [
        { ...base, substituents: [{ residue: 'Hex', linkage: 'O' }], formula: 'C21H21O11+' },
        {
          ...base,
          rank: 2,
          tiedWithPrevious: true,
          aglycone: {
            name: 'kaempferol',
            formula: 'C15H11O6+',
            class: 'flavonol',
            alternatives: ['luteolin'],
          },
          substituents: [{ residue: 'Hex', linkage: 'O' }],
          formula: 'C21H21O11+',
          // Not (yet) in CandidateResultSchema: the writers read it when present.
          ...({ ionType: '[M+H]+' } as object),
        },
      ],
    };
    const p = parseMzTab(await run((out) => createMzTabWriter(out), [tie]));
    const sml = p.tables.SML[0]!;
    expect(sml.chemical_name!.split('|')).toEqual(['cyanidin + Hex', 'kaempferol + Hex', 'luteolin + Hex']);
    expect(sml.chemical_formula!.split('|')).toEqual(['C21H21O11+', 'C21H20O11', 'C21H20O11']);
    expect(sml.adduct_ions).toBe('[M]+|[M+H]+');
    const masses = sml.theoretical_neutral_mass!.split('|').map(Number);
    // 449.10784 + one electron (CODATA 2018) for the cation; 449.10784 - (1.00782503223 - electron) for [M+H]+.
    expect(masses[0]).toBeCloseTo(449.10784 + ELECTRON_MASS, 5);
    expect(masses[1]).toBeCloseTo(449.10784 - 1.00782503223 + ELECTRON_MASS, 5);
    expect(p.tables.SME.map((r) => [r.chemical_name, r.adduct_ion, r.rank])).toEqual([
      ['cyanidin + Hex', '[M]+', '1'],
      ['kaempferol + Hex', '[M+H]+', '1'],
      ['luteolin + Hex', '[M+H]+', '1'],
    ]);
  });

  it('with the aglycone library, reports each same-ion alternative as its own molecule and ion type', async () => {
    // The engine merges cyanidin (flavylium, [M]+) and kaempferol/luteolin ([M+H]+) into one candidate when
    // their Y0 ions are the same formula, C15H11O6+ (REFERENCE.md §3).
    const merged: SpectrumResult = {
      ...CYANIDIN,
      id: 'MERGED',
      candidates: [
        {
          ...CYANIDIN.candidates[0]!,
          aglycone: { name: 'cyanidin', formula: 'C15H11O6+', alternatives: ['kaempferol', 'luteolin'] },
        },
      ],
    };
    const rules = (await loadDefaultRuleSet()).value!;
    const p = parseMzTab(
      await run((out) => createMzTabWriter(out, { aglycones: rules.aglycones }), [merged]),
    );
    const sml = p.tables.SML[0]!;
    expect(sml.chemical_formula!.split('|')).toEqual(['C26H29O15+', 'C26H28O15', 'C26H28O15']);
    expect(sml.adduct_ions).toBe('[M]+|[M+H]+');
    const [cation, neutral] = sml.theoretical_neutral_mass!.split('|').map(Number);
    // The neutral glycoside is the cation's atoms minus one H atom.
    expect(cation! - neutral!).toBeCloseTo(1.00782503223, 6);
    expect(p.tables.SME.map((r) => [r.database_identifier, r.chemical_formula, r.adduct_ion])).toEqual([
      ['ruleset:cyanidin', 'C26H29O15+', '[M]+'],
      ['ruleset:kaempferol', 'C26H28O15', '[M+H]+'],
      ['ruleset:luteolin', 'C26H28O15', '[M+H]+'],
    ]);
    // Negative mode: kaempferol hexoside [M-H]-, aglycone ion C15H9O6-, alternatives of the same neutral formula.
    const neg: SpectrumResult = {
      ...KAEMPFEROL,
      candidates: [
        {
          ...KAEMPFEROL.candidates[0]!,
          aglycone: { ...KAEMPFEROL.candidates[0]!.aglycone, formula: 'C15H9O6-' },
        },
      ],
    };
    const q = parseMzTab(await run((out) => createMzTabWriter(out, { aglycones: rules.aglycones }), [neg]));
    expect(q.tables.SME.map((r) => [r.chemical_formula, r.adduct_ion])).toEqual(
      Array(4).fill(['C21H20O11', '[M-H]-']),
    );
  });

  it('references mzML spectra by id and gives each run its own assay', async () => {
    const p = parseMzTab(
      await run((out) =>
        createMzTabWriter(out, {
          msRuns: [
            { location: 'file:///data/a.mzML', format: 'mzml' },
            { location: 'file:///data/b.mgf', format: 'mgf' },
          ],
          msRunOf: (r) => (r.id === KAEMPFEROL.id ? 2 : 1),
        }),
      ),
    );
    expect(p.mtd.get('ms_run[1]-format')).toContain('MS:1000584');
    expect(p.mtd.get('ms_run[1]-id_format')).toContain('MS:1001530');
    expect(p.mtd.get('assay[2]')).toBe('b.mgf');
    expect(p.mtd.get('study_variable[1]-assay_refs')).toBe('assay[1]|assay[2]');
    expect(p.headers.SMH).toContain('abundance_assay[2]');
    const byId = (id: string) => p.tables.SME.find((r) => r.opt_global_spectrum_id === id)!;
    expect(byId(CYANIDIN.id).spectra_ref).toBe(`ms_run[1]:${CYANIDIN.id}`);
    expect(byId(KAEMPFEROL.id).spectra_ref).toBe('ms_run[2]:index=1');
  });

  it('spills rows to temporary files past its memory limit, gives the same file, and cleans up', async () => {
    const many: SpectrumResult[] = Array.from({ length: 150 }, (_, i) => ({
      ...ALL[i % ALL.length]!,
      id: `S${i}`,
      index: i,
    }));
    const inMemory = await run((out) => createMzTabWriter(out), many);
    const spilled = await run((out) => createMzTabWriter(out, { spoolBytes: 200, tmpDir: tmp }), many);
    expect(spilled).toBe(inMemory);
    expect(await readdir(tmp)).toEqual([]);
    const p = parseMzTab(spilled);
    expect(p.tables.SME.map((r) => Number(r.SME_ID))).toEqual(p.tables.SME.map((_, i) => i + 1));
  });

  it('removes its temporary files when aborted', async () => {
    const out = new (await import('node:stream')).PassThrough();
    out.resume();
    const w = createMzTabWriter(out, { spoolBytes: 10, tmpDir: tmp });
    await w.begin({ name: 'x', version: '1.0.0', sha256: '00' });
    for (let i = 0; i < 20; i++) await w.write({ ...CYANIDIN, id: `A${i}` });
    expect((await readdir(tmp)).length).toBe(1);
    await w.abort();
    expect(await readdir(tmp)).toEqual([]);
  });
});
