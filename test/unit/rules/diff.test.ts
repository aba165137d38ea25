import { describe, expect, it } from 'vitest';
import { compareVersions, diffRuleSets, formatRuleSetDiff } from '../../../engine/rules/index.js';
import type { RuleSet } from '../../../engine/rules/schema.js';
import { loadDefaultRuleSet } from '../../../formats/ruleset-file.js';

// Pinned at 1.0.0 so the version arithmetic below does not depend on the shipped file's current version.
const base: RuleSet = { ...((await loadDefaultRuleSet()).value as RuleSet), version: '1.0.0' };
const clone = (): RuleSet => structuredClone(base);

describe('diffRuleSets', () => {
  it('finds nothing between a rule set and itself', () => {
    const d = diffRuleSets(base, clone());
    expect(d.changes).toEqual([]);
    expect(d.requiredBump).toBe('none');
    expect(d.warnings).toEqual([]);
  });

  it('lists an added aglycone and a minor bump as enough', () => {
    const next = clone();
    next.version = '1.1.0';
    next.aglycones.push({ name: 'tricetin', formula: 'C15H10O7', class: 'flavone', source: '[mem]' });
    const d = diffRuleSets(base, next);
    expect(d.changes).toEqual([{ section: 'aglycones', kind: 'added', name: 'tricetin', impact: 'minor' }]);
    expect(d.versionChange).toBe('minor');
    expect(d.requiredBump).toBe('minor');
    expect(d.warnings).toEqual([]);
    expect(formatRuleSetDiff(d)).toContain('+ aglycones tricetin');
  });

  it('lists a changed formula (major) and a removed residue, and warns when the version did not move', () => {
    const next = clone();
    next.acyls = next.acyls.map((a) => (a.name === 'galloyl' ? { ...a, formula: 'C7H6O5' } : a));
    next.residues = next.residues.filter((r) => r.name !== 'HexA');
    const d = diffRuleSets(base, next);
    expect(d.changes).toContainEqual({
      section: 'acyls',
      kind: 'changed',
      name: 'galloyl',
      fields: [{ field: 'formula', before: 'C7H4O4', after: 'C7H6O5' }],
      impact: 'major',
    });
    expect(d.changes).toContainEqual({ section: 'residues', kind: 'removed', name: 'HexA', impact: 'major' });
    expect(d.requiredBump).toBe('major');
    expect(d.warnings.map((w) => w.code)).toEqual(['version-not-bumped']);
  });

  it('treats formulas by content (H10C6O5 is C6H10O5) and sources as documentation (patch)', () => {
    const next = clone();
    next.version = '1.0.1';
    next.residues[0] = { ...next.residues[0]!, formula: 'H10C6O5', source: 'another source' };
    const d = diffRuleSets(base, next);
    expect(d.changes).toEqual([
      {
        section: 'residues',
        kind: 'changed',
        name: 'Hex',
        fields: [{ field: 'source', before: base.residues[0]!.source, after: 'another source' }],
        impact: 'patch',
      },
    ]);
    expect(d.warnings).toEqual([]);
  });

  it('lists tolerance, scoring, element range and ion type changes, and warns when the bump is too small', () => {
    const next = clone();
    next.version = '1.0.1';
    next.tolerances.fragmentPpm = 15;
    next.scoring.knownLoss = 4;
    next.elements.aglycone.C = [5, 45];
    next.ionTypes.negative = next.ionTypes.negative.filter((t) => t !== '[M+Cl]-');
    const d = diffRuleSets(base, next);
    const names = d.changes.map((c) => `${c.kind} ${c.section} ${c.name}`);
    expect(names).toEqual([
      'removed ionTypes [M+Cl]-',
      'changed elements aglycone.C',
      'changed tolerances fragmentPpm',
      'changed scoring knownLoss',
    ]);
    expect(d.changes.find((c) => c.name === 'fragmentPpm')?.fields).toEqual([
      { field: 'fragmentPpm', before: 10, after: 15 },
    ]);
    expect(d.requiredBump).toBe('major');
    expect(d.warnings.map((w) => w.code)).toEqual(['version-bump-too-small']);
  });

  it('warns when the version goes down', () => {
    const next = clone();
    next.version = '0.9.0';
    expect(diffRuleSets(base, next).warnings.map((w) => w.code)).toEqual(['version-downgrade']);
  });
});

describe('compareVersions', () => {
  it('names the part that changed', () => {
    expect(compareVersions('1.0.0', '2.0.0')).toBe('major');
    expect(compareVersions('1.0.0', '1.2.0')).toBe('minor');
    expect(compareVersions('1.0.0', '1.0.3')).toBe('patch');
    expect(compareVersions('1.0.0', '1.0.0')).toBe('none');
    expect(compareVersions('1.2.0', '1.1.9')).toBe('downgrade');
    expect(compareVersions('1.0.0-rc.1', '1.0.0')).toBe('prerelease');
    expect(compareVersions('1.0.0', '1.0.0-rc.1')).toBe('downgrade');
  });
});
