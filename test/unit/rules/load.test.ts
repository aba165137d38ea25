import { describe, expect, it } from 'vitest';
import { formatRuleIssue, loadRuleSet, type RuleIssue } from '../../../engine/rules/index.js';

/** A small valid rule set; tests break one thing in it at a time. */
const VALID = `name: tiny
version: 1.0.0
changelog:
  - version: 1.0.0
    date: '2026-01-01'
    changes: [first]
elements:
  aglycone: { C: [5, 40], H: [2, 60], O: [1, 20] }
  precursor: { C: [5, 100], H: [2, 140], O: [1, 60] }
ionTypes:
  positive: ['[M]+', '[M+H]+']
  negative: ['[M-H]-', '[M+HCOO]-']
residues:
  - name: Hex
    formula: C6H10O5
    linkages: [O, C]
    source: test
  - name: Pen
    formula: C5H8O4
    source: test
acyls:
  - name: acetyl
    formula: C2H2O
    source: test
smallLosses:
  - name: H2O
    formula: H2O
    source: test
crossRing:
  - name: 0,2X Hex
    formula: C4H8O4
    residue: Hex
    source: test
adductLosses:
  - name: formic acid
    ionType: '[M+HCOO]-'
    formula: CH2O2
    source: test
aglycones:
  - name: cyanidin
    formula: C15H11O6+
    class: anthocyanidin
    source: test
  - name: quercetin
    formula: C15H10O7
    class: flavonol
    source: test
`;

/** 1-based line of the first line containing `needle` (after `from`, if given). */
function lineOf(text: string, needle: string, from?: string): number {
  const lines = text.split('\n');
  const start = from ? lines.findIndex((l) => l.includes(from)) : 0;
  const i = lines.findIndex((l, k) => k >= start && l.includes(needle));
  if (i < 0) throw new Error(`"${needle}" not in text`);
  return i + 1;
}

function only(issues: RuleIssue[]): RuleIssue {
  expect(issues).toHaveLength(1);
  return issues[0]!;
}

describe('loadRuleSet', () => {
  it('accepts a valid file, fills defaults, and warns about nothing', () => {
    const r = loadRuleSet(VALID, { file: 'tiny.yaml' });
    expect(r.errors).toEqual([]);
    expect(r.warnings).toEqual([]);
    expect(r.value?.residues[1]?.linkages).toEqual(['O']);
    expect(r.value?.scoring.knownLoss).toBe(3);
  });

  it('reads JSON as well', () => {
    const r = loadRuleSet(JSON.stringify(loadRuleSet(VALID).value));
    expect(r.errors).toEqual([]);
  });

  it('reports bad YAML with code syntax and its line, and no value', () => {
    const text = VALID.replace('  - name: Pen\n', '  - name: [Pen\n');
    const r = loadRuleSet(text, { file: 'bad.yaml' });
    expect(r.value).toBeUndefined();
    expect(r.errors.length).toBeGreaterThan(0);
    expect(r.errors[0]!.code).toBe('syntax');
    expect(r.errors[0]!.file).toBe('bad.yaml');
    expect(r.errors[0]!.line).toBeGreaterThanOrEqual(lineOf(text, '[Pen'));
  });

  it('reports a duplicate key with its line', () => {
    const text = VALID.replace('version: 1.0.0\nchangelog', 'version: 1.0.0\nversion: 1.0.1\nchangelog');
    const e = only(loadRuleSet(text).errors);
    expect(e.code).toBe('duplicate-key');
    expect(e.line).toBe(3);
  });

  it('reports a document that is not a mapping', () => {
    expect(only(loadRuleSet('- a\n- b\n').errors).code).toBe('not-a-mapping');
    expect(only(loadRuleSet('').errors).code).toBe('not-a-mapping');
  });

  it('reports a wrong type with its path and the line of the value', () => {
    const text = VALID.replace('    linkages: [O, C]', '    linkages: [O, C]\n    maxCount: many');
    const e = only(loadRuleSet(text, { file: 'x.yaml' }).errors);
    expect(e.code).toBe('wrong-type');
    expect(e.path).toBe('residues[0].maxCount');
    expect(e.line).toBe(lineOf(text, 'maxCount: many'));
    expect(e.column).toBe(15);
    expect(formatRuleIssue(e)).toMatch(/^x\.yaml:\d+:15: error wrong-type residues\[0\]\.maxCount: /);
  });

  it('reports a missing field at the mapping that lacks it', () => {
    const text = VALID.replace('  - name: quercetin\n    formula: C15H10O7\n', '  - name: quercetin\n');
    const e = only(loadRuleSet(text).errors);
    expect(e.code).toBe('missing-field');
    expect(e.path).toBe('aglycones[1].formula');
    expect(e.line).toBe(lineOf(text, 'name: quercetin'));
  });

  it('reports values out of range and of the wrong format', () => {
    const text = VALID.replace('version: 1.0.0\nchangelog', 'version: one\nchangelog').replace(
      "  positive: ['[M]+', '[M+H]+']",
      '  positive: []',
    );
    const codes = loadRuleSet(text).errors.map((e) => [e.code, e.path]);
    expect(codes).toContainEqual(['invalid-format', 'version']);
    expect(codes).toContainEqual(['out-of-range', 'ionTypes.positive']);
  });

  it('reports an unknown key (a typo would otherwise be dropped silently) at the key', () => {
    const text = VALID.replace('    linkages: [O, C]', '    linkages: [O, C]\n    maxcount: 2');
    const e = only(loadRuleSet(text).errors);
    expect(e.code).toBe('unknown-key');
    expect(e.path).toBe('residues[0].maxcount');
    expect(e.line).toBe(lineOf(text, 'maxcount'));
    expect(e.column).toBe(5);
  });

  it('reports an unknown element in a formula', () => {
    const text = VALID.replace('formula: C5H8O4', 'formula: C5H8Xq4');
    const e = only(loadRuleSet(text).errors);
    expect(e.code).toBe('formula-unknown-element');
    expect(e.path).toBe('residues[1].formula');
    expect(e.line).toBe(lineOf(text, 'C5H8Xq4'));
  });

  it('reports an unreadable formula and a charged loss', () => {
    const bad = loadRuleSet(VALID.replace('formula: C2H2O', 'formula: 2CH2O')).errors;
    expect(bad.map((e) => e.code)).toEqual(['formula-syntax']);
    const charged = loadRuleSet(VALID.replace('formula: C2H2O', 'formula: C2H2O+')).errors;
    expect(charged.map((e) => [e.code, e.path])).toEqual([['formula-charged', 'acyls[0].formula']]);
    const dication = loadRuleSet(VALID.replace('formula: C15H11O6+', 'formula: C15H11O6+2')).errors;
    expect(dication.map((e) => e.code)).toEqual(['formula-charged']);
  });

  it('reports a duplicate name within a section and across sections, at the second one', () => {
    const within = VALID.replace('  - name: Pen', '  - name: Hex');
    const e = only(loadRuleSet(within).errors);
    expect(e.code).toBe('duplicate-name');
    expect(e.path).toBe('residues[1].name');
    expect(e.line).toBe(lineOf(within, 'name: Hex', 'formula: C6H10O5'));
    const across = VALID.replace('  - name: acetyl', '  - name: Pen');
    expect(only(loadRuleSet(across).errors)).toMatchObject({ code: 'duplicate-name', path: 'acyls[0].name' });
    const aglycones = VALID.replace('  - name: quercetin', '  - name: Cyanidin');
    expect(only(loadRuleSet(aglycones).errors)).toMatchObject({
      code: 'duplicate-name',
      path: 'aglycones[1].name',
    });
  });

  it('reports a cross-ring rule naming a residue that does not exist', () => {
    const text = VALID.replace('    residue: Hex', '    residue: Hexose');
    const e = only(loadRuleSet(text).errors);
    expect(e.code).toBe('unknown-residue');
    expect(e.path).toBe('crossRing[0].residue');
    expect(e.line).toBe(lineOf(text, 'residue: Hexose'));
  });

  it('checks that a cross-ring loss is part of its residue, which should allow C linkage', () => {
    const big = loadRuleSet(VALID.replace('formula: C4H8O4', 'formula: C7H8O4')).errors;
    expect(big.map((e) => e.code)).toEqual(['cross-ring-too-large']);
    const notC = loadRuleSet(
      VALID.replace('    residue: Hex', '    residue: Pen').replace('formula: C4H8O4', 'formula: C3H6O3'),
    );
    expect(notC.errors).toEqual([]);
    expect(notC.warnings.map((w) => w.code)).toEqual(['cross-ring-not-c-linked']);
  });

  it('reports unreadable ion types, ion types on the wrong polarity, and unlisted ones', () => {
    const unreadable = loadRuleSet(VALID.replace("'[M+H]+'", "'M+H'")).errors;
    expect(unreadable.map((e) => [e.code, e.path])).toEqual([['unknown-ion-type', 'ionTypes.positive[1]']]);
    const wrong = loadRuleSet(VALID.replace("'[M+H]+'", "'[M+Cl]-'")).errors;
    expect(wrong.map((e) => e.code)).toEqual(['ion-type-polarity']);
    const unlisted = loadRuleSet(VALID.replace("'[M+H]+'", "'[M+3Na]3+'"));
    expect(unlisted.errors).toEqual([]);
    expect(unlisted.warnings.map((w) => w.code)).toEqual(['ion-type-not-listed']);
    const unused = loadRuleSet(VALID.replace("'[M+HCOO]-'\n  ", "'[M+Cl]-'\n  "));
    expect(unused.warnings.map((w) => w.code)).toEqual(['adduct-ion-type-unused']);
  });

  it('checks element ranges: known symbols, min below max, sane sizes, room for the largest candidate', () => {
    const unknown = loadRuleSet(VALID.replace('O: [1, 20] }', 'O: [1, 20], Xe: [0, 1] }')).errors;
    expect(unknown.map((e) => [e.code, e.path])).toEqual([['unknown-element', 'elements.aglycone.Xe']]);
    const inverted = loadRuleSet(VALID.replace('C: [5, 40]', 'C: [40, 5]')).errors;
    expect(inverted.map((e) => e.code)).toEqual(['bad-element-range']);
    const small = loadRuleSet(VALID.replace('C: [5, 100]', 'C: [5, 50]'));
    expect(small.errors).toEqual([]);
    expect(small.warnings.map((w) => w.code)).toEqual(['precursor-range-too-small']);
    const outside = loadRuleSet(VALID.replace('C: [5, 40]', 'C: [5, 14]'));
    expect(outside.warnings.map((w) => w.code)).toContain('aglycone-outside-ranges');
  });

  it('allows aglycones with the same formula but warns, naming them all (they will be ties)', () => {
    const text = VALID.replace(
      'aglycones:\n',
      'aglycones:\n  - name: kaempferol\n    formula: C15H10O6\n    class: flavonol\n    source: test\n' +
        '  - name: luteolin\n    formula: C15H10O6\n    class: flavone\n    source: test\n',
    );
    const r = loadRuleSet(text);
    expect(r.errors).toEqual([]);
    const w = only(r.warnings);
    expect(w.code).toBe('duplicate-aglycone-formula');
    expect(w.message).toContain('kaempferol');
    expect(w.message).toContain('luteolin');
    expect(w.line).toBe(lineOf(text, 'formula: C15H10O6', 'name: luteolin'));
  });

  it('warns about radical formulas where an even-electron one is expected', () => {
    const r = loadRuleSet(VALID.replace('formula: C15H10O7', 'formula: C15H11O7'));
    expect(r.warnings.map((w) => w.code)).toEqual(['formula-odd-electron']);
  });

  it('warns when the changelog has no entry for the version', () => {
    const r = loadRuleSet(VALID.replace('version: 1.0.0\nchangelog', 'version: 1.1.0\nchangelog'));
    expect(r.errors).toEqual([]);
    expect(r.warnings.map((w) => [w.code, w.line])).toEqual([['changelog-missing-version', 2]]);
  });

  it('sorts issues by line', () => {
    const text = VALID.replace('formula: C5H8O4', 'formula: C5H8Xq4').replace(
      '  - name: quercetin',
      '  - name: cyanidin',
    );
    const lines = loadRuleSet(text).errors.map((e) => e.line!);
    expect(lines).toEqual([...lines].sort((a, b) => a - b));
    expect(lines).toHaveLength(2);
  });
});

describe('loadRuleSet on hostile input', () => {
  it('refuses an alias bomb instead of expanding it', () => {
    const lines = ['a0: &a0 [x, x, x, x, x, x, x, x, x, x]'];
    for (let i = 1; i < 8; i++) {
      lines.push(`a${i}: &a${i} [${Array.from({ length: 10 }, () => `*a${i - 1}`).join(', ')}]`);
    }
    const r = loadRuleSet(lines.join('\n'));
    expect(r.value).toBeUndefined();
    expect(r.errors.map((e) => e.code)).toEqual(['syntax']);
  });
});
