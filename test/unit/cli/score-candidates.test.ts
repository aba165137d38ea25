import { readFileSync } from 'node:fs';
import { beforeAll, describe, expect, it, vi } from 'vitest';
import {
  CandidatesLookup,
  checkStructure,
  formatCandidatesIssue,
  parseCandidates,
  structureNames,
} from '../../../cli/candidates-file.js';
import { ResultsDocumentSchema } from '../../../engine/report/result.js';
import type { RuleSet } from '../../../engine/rules/schema.js';
import * as engine from '../../../engine/score/score-spectrum.js';
import { loadDefaultRuleSet } from '../../../formats/ruleset-file.js';
import { CYANIDIN_HEX_PEN, mgfBlock, score, useTempDir } from './cli-helpers.js';

// Spy on the engine (calling through) to see which candidates each spectrum was scored with.
vi.mock('../../../engine/score/score-spectrum.js', async (importOriginal) => {
  const real = await importOriginal<typeof import('../../../engine/score/score-spectrum.js')>();
  return { ...real, scoreSpectrum: vi.fn(real.scoreSpectrum) };
});

let rules: RuleSet;
beforeAll(async () => {
  rules = (await loadDefaultRuleSet()).value!;
});

const codes = (r: ReturnType<typeof parseCandidates>) => r.errors.map((e) => e.code);

describe('candidates file: YAML / JSON', () => {
  it('reads "all" and "spectra", strings or { structure, name }, a single entry or a list', () => {
    const text = [
      '# candidates for batch 12',
      'version: 1',
      'all:',
      '  - cyanidin[Hex[Pen]]',
      '  - { structure: "<C16H12O6>[Hex]", name: my methoxyflavone }',
      'spectra:',
      '  S0001: apigenin[C-Hex]',
      '  "scan=7 controller=1":',
      '    - cyanidin[Hex[malonyl]]',
      '',
    ].join('\n');
    const r = parseCandidates(text, { file: 'c.yaml', rules });
    expect(r.errors).toEqual([]);
    expect(r.value!.all).toEqual([
      { structure: 'cyanidin[Hex[Pen]]' },
      { structure: '<C16H12O6>[Hex]', name: 'my methoxyflavone' },
    ]);
    expect([...r.value!.spectra]).toEqual([
      ['S0001', [{ structure: 'apigenin[C-Hex]' }]],
      ['scan=7 controller=1', [{ structure: 'cyanidin[Hex[malonyl]]' }]],
    ]);
  });

  it('reads the same content written as JSON', () => {
    const r = parseCandidates(
      JSON.stringify({ all: ['cyanidin[Hex[Pen]]'], spectra: { S0001: ['<C16H12O6>[Hex]'] } }, null, 2),
      { file: 'c.json', rules },
    );
    expect(r.errors).toEqual([]);
    expect(r.value!.spectra.get('S0001')).toEqual([{ structure: '<C16H12O6>[Hex]' }]);
  });

  it('places a structure error at its line and column', () => {
    const text = 'all:\n  - cyanidin[Hex[Pen]]\n  - cyanidin[Hexx]\n';
    const r = parseCandidates(text, { file: 'c.yaml', rules });
    expect(r.value).toBeUndefined();
    expect(r.errors).toHaveLength(1);
    expect(r.errors[0]).toMatchObject({ code: 'unknown-residue', line: 3, column: 14, path: 'all[1]' });
    expect(formatCandidatesIssue(r.errors[0]!)).toMatch(/^c\.yaml:3:14: error unknown-residue all\[1\]: /);
  });

  it('reports unknown keys, wrong types, YAML syntax and duplicate keys with lines', () => {
    expect(parseCandidates('al:\n  - cyanidin[Hex]\n', { rules }).errors[0]).toMatchObject({
      code: 'unknown-key',
      line: 1,
      column: 1,
    });
    expect(parseCandidates('spectra:\n  S1:\n    - 42\n', { rules }).errors[0]).toMatchObject({
      code: 'invalid-entry',
      line: 3,
      path: 'spectra.S1',
    });
    expect(
      parseCandidates('all:\n  - { structure: "cyanidin[Hex]", nam: x }\n', { rules }).errors[0],
    ).toMatchObject({
      code: 'unknown-key',
      line: 2,
    });
    expect(codes(parseCandidates('all: ["cyanidin[Hex]"\n', { rules }))).toContain('syntax');
    // Unquoted brackets inside a YAML flow list: a syntax error that says how to write it.
    const flow = parseCandidates('all: [cyanidin[Hex]]\n', { rules });
    expect(flow.errors[0]).toMatchObject({ code: 'syntax', line: 1 });
    expect(flow.errors[0]!.message).toMatch(/in quotes/);
    expect(
      codes(parseCandidates('spectra:\n  S1: cyanidin[Hex]\n  S1: cyanidin[Hex]\n', { rules })),
    ).toContain('duplicate-key');
    expect(codes(parseCandidates('- cyanidin[Hex]\n', { rules }))).toEqual(['not-a-mapping']);
    expect(codes(parseCandidates('version: 2\n', { rules }))).toEqual(['invalid-entry']);
  });

  it('warns on a structure listed twice for the same spectrum, and on an empty file', () => {
    const r = parseCandidates('all: ["cyanidin[Hex]", "cyanidin[Hex]"]\n', { rules });
    expect(r.errors).toEqual([]);
    expect(r.warnings.map((w) => w.code)).toEqual(['duplicate-structure']);
    expect(r.value!.all).toHaveLength(1);
    const empty = parseCandidates('# nothing yet\n', { rules });
    expect(empty.errors).toEqual([]);
    expect(empty.warnings.map((w) => w.code)).toEqual(['empty']);
  });
});

describe('candidates file: TSV', () => {
  it('reads spectrum_id<TAB>structure[<TAB>name], * for every spectrum, an optional header and comments', () => {
    const text = [
      'spectrum_id\tstructure\tname',
      '# every spectrum',
      '*\tcyanidin[Hex[Pen]]',
      'S0001\t<C16H12O6>[Hex]\tmy methoxyflavone',
      '',
      'S0001\tapigenin[C-Hex]\t',
    ].join('\r\n');
    const r = parseCandidates(text, { file: 'c.tsv', rules });
    expect(r.errors).toEqual([]);
    expect(r.value!.all).toEqual([{ structure: 'cyanidin[Hex[Pen]]' }]);
    expect(r.value!.spectra.get('S0001')).toEqual([
      { structure: '<C16H12O6>[Hex]', name: 'my methoxyflavone' },
      { structure: 'apigenin[C-Hex]' },
    ]);
  });

  it('is recognised by content when the name says nothing', () => {
    const r = parseCandidates('S1\tcyanidin[Hex]\n', { file: 'candidates', rules });
    expect(r.errors).toEqual([]);
    expect(r.value!.spectra.get('S1')).toEqual([{ structure: 'cyanidin[Hex]' }]);
  });

  it('gives the line and column of each problem', () => {
    const text = [
      '*\tcyanidin[Hex[Pen]]',
      'S1\tcyanidin[Hex[Pen]',
      'S2',
      'S3\tquercetin[C-dHex]',
      '\tcyanidin[Hex]',
    ].join('\n');
    const r = parseCandidates(text, { file: 'c.tsv', rules });
    expect(r.value).toBeUndefined();
    expect(r.errors.map((e) => [e.line, e.column, e.code])).toEqual([
      [2, 12, 'structure-syntax'],
      [3, 1, 'columns'],
      [4, 14, 'not-c-linkable'],
      [5, 1, 'invalid-entry'],
    ]);
  });
});

describe('stacking notation check', () => {
  const names = () => structureNames(rules);
  it.each([
    'cyanidin[Hex[Pen]]',
    'cyanidin[Hex][Hex]',
    '<C16H12O6>[Hex]',
    'apigenin[C-Hex]',
    'cyanidin[Hex[malonyl]]',
    'malvidin[Hex[p-coumaroyl]]',
    '(epi)catechin[Hex]',
    'caffeic acid[Hex]',
    'quercetin[Hex[dHex]]',
    'quercetin[O-Hex]',
    'apigenin[C-Hex[Pen]]',
  ])('accepts %s', (s) => {
    expect(checkStructure(s, names())).toEqual([]);
  });

  it.each([
    ['cyanidin[Hex', 'structure-syntax', 8],
    ['cyanidin]Hex[', 'structure-syntax', 8],
    ['cyanidin Hex', 'unknown-aglycone', 0],
    ['[Hex]', 'structure-syntax', 0],
    ['cyanidin[]', 'structure-syntax', 9],
    ['<C16H12Q6>[Hex]', 'bad-formula', 1],
    ['<C16H12O6[Hex]', 'structure-syntax', 0],
    ['Cyanidin[Hex]', 'unknown-aglycone', 0],
    ['cyanidin[hex]', 'unknown-residue', 9],
    ['cyanidin[C-malonyl]', 'not-c-linkable', 9],
    ['cyanidin[Hex] x', 'structure-syntax', 14],
    ['<C15H11O6+>[Hex]', 'bad-formula', 1],
    ['apigenin[Hex[C-Hex]]', 'not-c-linkable', 13],
    ['cyanidin[Hex[malonyl[Hex]]]', 'acyl-carries', 20],
    ['cyanidin[O-malonyl]', 'not-c-linkable', 9],
  ])('rejects %s (%s at %i)', (s, code, offset) => {
    const p = checkStructure(s, names());
    expect(p[0]).toMatchObject({ code, offset });
  });

  it('suggests the rule set spelling of a name written in other case', () => {
    expect(
      checkStructure('Cyanidin[hex]', names())
        .map((p) => p.message)
        .join(' '),
    ).toMatch(/did you mean "cyanidin"\?.*did you mean "Hex"\?/);
  });

  it('checks only the syntax without a rule set', () => {
    expect(checkStructure('madeupidin[Foo[Bar]]')).toEqual([]);
  });
});

describe('candidates lookup', () => {
  it('gives the batch-wide candidates first, then the spectrum own, without repeats; tracks unmatched ids', () => {
    const r = parseCandidates(
      'all:\n  - cyanidin[Hex]\nspectra:\n  A: ["cyanidin[Hex]", "cyanidin[Hex[Pen]]"]\n  B: quercetin[Hex]\n',
      {
        rules,
      },
    );
    const lookup = new CandidatesLookup(r.value!);
    expect(lookup.forSpectrum('A')).toEqual([
      { structure: 'cyanidin[Hex]' },
      { structure: 'cyanidin[Hex[Pen]]' },
    ]);
    expect(lookup.forSpectrum('Z')).toEqual([{ structure: 'cyanidin[Hex]' }]);
    expect(lookup.unmatched()).toEqual(['B']);
    const own = new CandidatesLookup(parseCandidates('spectra: { A: "cyanidin[Hex]" }\n', { rules }).value!);
    expect(own.forSpectrum('Z')).toBeUndefined();
  });
});

describe('peel score --candidates', () => {
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

  it('passes each spectrum its candidates (batch-wide and its own) and warns about ids that matched nothing', async () => {
    const file = tmp.file(
      'c.yaml',
      'all:\n  - cyanidin[Hex]\nspectra:\n  cy-hex-pen: cyanidin[Hex[Pen]]\n  nope: cyanidin[Hex]\n',
    );
    const spy = vi.mocked(engine.scoreSpectrum);
    spy.mockClear();
    const r = await score([input, '--candidates', file]);
    expect(r.code).toBe(0);
    const calls = spy.mock.calls.map(([s, , o]) => [s.id, o?.candidates]);
    expect(calls).toEqual([
      ['cy-hex-pen', [{ structure: 'cyanidin[Hex]' }, { structure: 'cyanidin[Hex[Pen]]' }]],
      ['cy-hex', [{ structure: 'cyanidin[Hex]' }]],
    ]);
    expect(r.err).toMatch(/1 spectrum id\(s\) of the candidates file matched no spectrum: nope/);
  });

  it('does not pass candidates when none apply', async () => {
    const file = tmp.file('c2.tsv', 'cy-hex\tcyanidin[Hex]\n');
    const spy = vi.mocked(engine.scoreSpectrum);
    spy.mockClear();
    expect((await score([input, '--candidates', file])).code).toBe(0);
    expect(spy.mock.calls.map(([s, , o]) => [s.id, o?.candidates])).toEqual([
      ['cy-hex-pen', undefined],
      ['cy-hex', [{ structure: 'cyanidin[Hex]' }]],
    ]);
  });

  it('exits 1 with file:line:column errors before any output for a bad candidates file', async () => {
    const file = tmp.file('bad.tsv', '*\tcyanidin[Hex]\nS1\tcyanidin[Hex[Pent]]\n');
    const r = await score([input, '--candidates', file]);
    expect(r.code).toBe(1);
    expect(r.out).toBe('');
    expect(r.err).toMatch(
      /bad\.tsv:2:17: error unknown-residue S1: "Pent" is neither a residue nor an acyl group/,
    );
    expect(r.err).toMatch(/the candidates file .*bad\.tsv has 1 error\(s\)/);
  });

  it('exits 1 when the candidates file cannot be read', async () => {
    const r = await score([input, '--candidates', `${tmp.dir}/none.yaml`]);
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/error unreadable: cannot read .*none\.yaml \(ENOENT\)/);
  });

  it('checks names against the --rules file in use', async () => {
    const text = readFileSync('rules/default.yaml', 'utf8').replace(
      /- name: cyanidin\n/,
      '- name: cyanidin-x\n',
    );
    const lab = tmp.file('lab.yaml', text);
    const file = tmp.file('c3.yaml', 'all: ["cyanidin[Hex]"]\n');
    const r = await score([input, '--rules', lab, '--candidates', file]);
    expect(r.code).toBe(1);
    expect(r.err).toMatch(/unknown-aglycone/);
  });

  it('reports user candidates in the results, marked source "user", for the spectra they were given for', async () => {
    const file = tmp.file(
      'c4.yaml',
      'spectra:\n  cy-hex-pen: [{ structure: "cyanidin[Hex[Pen]]", name: my pigment }]\n',
    );
    const r = await score([input, '--candidates', file]);
    expect(r.code).toBe(0);
    const doc = ResultsDocumentSchema.parse(JSON.parse(r.out));
    const mine = doc.spectra[0]!.candidates.filter((c) => c.source === 'user');
    expect(mine.map((c) => c.topology)).toContain('cyanidin[Hex[Pen]]');
    expect(doc.spectra[1]!.candidates.some((c) => c.source === 'user')).toBe(false);
  });
});
