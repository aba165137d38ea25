import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { formulaMz, monoisotopicMass, parseFormula } from '../../../engine/chem/formula.js';
import { ionMz, ionType } from '../../../engine/chem/ions.js';
import { loadRuleSet } from '../../../engine/rules/index.js';
import type { RuleSet } from '../../../engine/rules/schema.js';
import { defaultRuleSetPath, loadDefaultRuleSet, ruleSetSha256 } from '../../../formats/ruleset-file.js';

const loaded = await loadDefaultRuleSet();
const rules = loaded.value as RuleSet;
const aglycone = (name: string) => {
  const a = rules.aglycones.find((x) => x.name === name);
  if (!a) throw new Error(`no aglycone ${name}`);
  return parseFormula(a.formula);
};
const loss = (section: 'residues' | 'acyls' | 'smallLosses' | 'crossRing' | 'adductLosses', name: string) => {
  const e = (rules[section] as { name: string; formula: string }[]).find((x) => x.name === name);
  if (!e) throw new Error(`no ${section} ${name}`);
  return monoisotopicMass(parseFormula(e.formula));
};

describe('the default rule set', () => {
  it('loads with no errors, named default 1.2.0 with a changelog entry for its version', () => {
    expect(loaded.errors).toEqual([]);
    expect(rules.name).toBe('default');
    expect(rules.version).toBe('1.2.0');
    expect(rules.changelog.some((c) => c.version === rules.version)).toBe(true);
    expect(loaded.sha256).toMatch(/^[0-9a-f]{64}$/);
    expect(loaded.ref).toEqual({ name: 'default', version: '1.2.0', sha256: loaded.sha256 });
  });

  it('warns only about same-formula aglycones (ties), never about anything else', () => {
    expect(new Set(loaded.warnings.map((w) => w.code))).toEqual(new Set(['duplicate-aglycone-formula']));
    const kaempferol = loaded.warnings.find((w) => w.message.includes('kaempferol'));
    expect(kaempferol?.message).toContain('luteolin');
    expect(kaempferol?.line).toBeGreaterThan(0);
  });

  it('holds the residues, acyl groups and ion types of the design, with a source for every entry', () => {
    expect(rules.residues.map((r) => r.name)).toEqual(['Hex', 'Pen', 'dHex', 'HexA']);
    expect(rules.acyls.map((a) => a.name)).toEqual([
      'acetyl',
      'malonyl',
      'succinyl',
      'p-coumaroyl',
      'caffeoyl',
      'feruloyl',
      'sinapoyl',
      'galloyl',
      'p-hydroxybenzoyl',
      'oxaloyl',
    ]);
    expect(rules.residues.find((r) => r.name === 'Hex')?.linkages).toEqual(['O', 'C']);
    expect(rules.ionTypes.positive).toEqual(['[M]+', '[M+H]+', '[M+Na]+', '[M+K]+', '[M+NH4]+', '[M+2H]2+']);
    expect(rules.ionTypes.negative).toEqual(['[M-H]-', '[M+HCOO]-', '[M+Cl]-', '[M-2H]2-']);
    for (const name of [...rules.ionTypes.positive, ...rules.ionTypes.negative])
      expect(ionType(name)).toBeDefined();
    expect(rules.radicalAglycone).toBe(true);
    const all = [
      ...rules.residues,
      ...rules.acyls,
      ...rules.smallLosses,
      ...rules.crossRing,
      ...rules.aglycones,
    ];
    for (const e of all) expect(e.source.length).toBeGreaterThan(5);
  });

  it('has an aglycone library of at least 40 across the classes the issue names', () => {
    expect(rules.aglycones.length).toBeGreaterThanOrEqual(40);
    const classes = new Set(rules.aglycones.map((a) => a.class));
    for (const c of [
      'anthocyanidin',
      'flavonol',
      'flavone',
      'flavanone',
      'isoflavone',
      'dihydrochalcone',
      'flavan-3-ol',
      'stilbene',
      'hydroxycinnamic acid',
      'hydroxybenzoic acid',
      'coumarin',
    ]) {
      expect(classes).toContain(c);
    }
  });

  it('writes out every scoring, clean-up, limit and tolerance setting (nothing left to hidden defaults)', () => {
    const raw = readFileSync(defaultRuleSetPath(), 'utf8');
    for (const section of ['scoring', 'cleanup', 'limits', 'tolerances'] as const) {
      for (const key of Object.keys(rules[section])) expect(raw).toMatch(new RegExp(`^\\s+${key}:`, 'm'));
    }
    expect(rules.tolerances).toEqual({ precursorPpm: 7, fragmentPpm: 10, fragmentFloorDa: 0.002 });
  });
});

describe('masses of the default rule set against REFERENCE.md', () => {
  it('anthocyanidin flavylium cations', () => {
    // REFERENCE.md §3 [calc] from NIST masses (electron mass CODATA 2018)
    const expected: Record<string, number> = {
      pelargonidin: 271.0601,
      cyanidin: 287.05501,
      delphinidin: 303.04993,
      peonidin: 301.07066,
      petunidin: 317.06558,
      malvidin: 331.08123,
    };
    for (const [name, mz] of Object.entries(expected)) {
      const f = aglycone(name);
      expect(f.charge).toBe(1);
      expect(formulaMz(f)).toBeCloseTo(mz, 5);
    }
  });

  it('flavonol and flavone [M+H]+, [M-H]- and radical [M-2H]-. ions', () => {
    // REFERENCE.md §3 [calc] from NIST masses
    const table: [string, number, number, number][] = [
      ['kaempferol', 287.05501, 285.04046, 284.03264],
      ['luteolin', 287.05501, 285.04046, 284.03264],
      ['quercetin', 303.04993, 301.03538, 300.02755],
      ['myricetin', 319.04484, 317.03029, 316.02247],
      ['isorhamnetin', 317.06558, 315.05103, 314.0432],
      ['apigenin', 271.0601, 269.04555, 268.03772],
    ];
    const plusH = ionType('[M+H]+')!;
    const minusH = ionType('[M-H]-')!;
    for (const [name, mh, mmh, radical] of table) {
      const f = aglycone(name);
      expect(f.charge).toBe(0);
      expect(ionMz(f, plusH)).toBeCloseTo(mh, 5);
      expect(ionMz(f, minusH)).toBeCloseTo(mmh, 5);
      // [M-2H]-. : the neutral minus two H atoms, one electron added.
      const r = parseFormula(`${rules.aglycones.find((a) => a.name === name)!.formula}-`);
      const lessH = { counts: r.counts.map((n, i) => (i === 1 ? n - 2 : n)), charge: -1 };
      expect(formulaMz(lessH)).toBeCloseTo(radical, 5);
    }
  });

  it('identical ion formulas that make ties (cyanidin+ = kaempferol [M+H]+)', () => {
    // REFERENCE.md §3 "Identical ion formulas" [calc]
    const plusH = ionType('[M+H]+')!;
    expect(formulaMz(aglycone('cyanidin'))).toBeCloseTo(ionMz(aglycone('kaempferol'), plusH), 9);
    expect(formulaMz(aglycone('delphinidin'))).toBeCloseTo(ionMz(aglycone('quercetin'), plusH), 9);
    expect(formulaMz(aglycone('pelargonidin'))).toBeCloseTo(ionMz(aglycone('apigenin'), plusH), 9);
    expect(formulaMz(aglycone('petunidin'))).toBeCloseTo(ionMz(aglycone('isorhamnetin'), plusH), 9);
  });

  it('residues', () => {
    // REFERENCE.md §2: Hex (PMC4885406 Table II; Kazuno et al. 2005), Pen (Molecules 2016, 21:1494),
    // dHex (Kwon et al. 2019), HexA (PMC4885406)
    expect(loss('residues', 'Hex')).toBeCloseTo(162.05282, 5);
    expect(loss('residues', 'Pen')).toBeCloseTo(132.04226, 5);
    expect(loss('residues', 'dHex')).toBeCloseTo(146.05791, 5);
    expect(loss('residues', 'HexA')).toBeCloseTo(176.03209, 5);
    // Hex + dHex (rutinosyl), Shi et al. 2007; malonyl + Hex, Kwon et al. 2019
    expect(loss('residues', 'Hex') + loss('residues', 'dHex')).toBeCloseTo(308.11073, 5);
    expect(loss('acyls', 'malonyl') + loss('residues', 'Hex')).toBeCloseTo(248.05322, 5);
  });

  it('acyl groups', () => {
    // REFERENCE.md §2: Wu & Prior 2005 [pub]; succinyl and galloyl from memory
    const expected: Record<string, number> = {
      acetyl: 42.01056,
      malonyl: 86.00039,
      succinyl: 100.01604,
      'p-coumaroyl': 146.03678,
      caffeoyl: 162.03169,
      feruloyl: 176.04734,
      sinapoyl: 206.05791,
      galloyl: 152.01096,
      'p-hydroxybenzoyl': 120.02113,
      oxaloyl: 71.98474,
    };
    for (const [name, m] of Object.entries(expected)) expect(loss('acyls', name)).toBeCloseTo(m, 5);
  });

  it('small, cross-ring and adduct losses', () => {
    // REFERENCE.md §2: Fabre et al. 2001 (CO, CO2, C3O2); PMC4885406 (CH3); PMC5632855 and Kazuno 2005
    // (90, 120, 150); 2013 Q-TOF study (60); formic acid [trade]
    expect(loss('smallLosses', 'H2O')).toBeCloseTo(18.01056, 5);
    expect(loss('smallLosses', 'CO')).toBeCloseTo(27.99491, 5);
    expect(loss('smallLosses', 'CO2')).toBeCloseTo(43.98983, 5);
    expect(loss('smallLosses', 'C3O2')).toBeCloseTo(67.98983, 5);
    expect(loss('smallLosses', 'CH3')).toBeCloseTo(15.02348, 5);
    expect(loss('crossRing', '0,4X Hex')).toBeCloseTo(60.02113, 5);
    expect(loss('crossRing', '0,3X Hex')).toBeCloseTo(90.03169, 5);
    expect(loss('crossRing', '0,2X Hex')).toBeCloseTo(120.04226, 5);
    expect(loss('crossRing', '0,1X Hex')).toBeCloseTo(150.05282, 5);
    expect(loss('adductLosses', 'formic acid')).toBeCloseTo(46.00548, 5);
    // Neomangiferin [M-H]- 583 -> 421 -> 331 (-90), 301 (-120): PMC5632855, Fig. 4 (nominal masses)
    expect(Math.round(421 - loss('crossRing', '0,3X Hex'))).toBe(331);
    expect(Math.round(421 - loss('crossRing', '0,2X Hex'))).toBe(301);
  });
});

describe('the rule set hash', () => {
  it('depends on content, not on layout: the same rules as JSON hash the same as the YAML', () => {
    const asJson = loadRuleSet(JSON.stringify(rules, null, 1), { file: 'default.json' });
    expect(asJson.errors).toEqual([]);
    expect(ruleSetSha256(asJson.value!)).toBe(loaded.sha256);
    const reordered = loadRuleSet(JSON.stringify(Object.fromEntries(Object.entries(rules).reverse())));
    expect(ruleSetSha256(reordered.value!)).toBe(loaded.sha256);
  });

  it('changes when a value changes', () => {
    const changed = { ...rules, tolerances: { ...rules.tolerances, fragmentPpm: 12 } };
    expect(ruleSetSha256(changed)).not.toBe(loaded.sha256);
  });
});
