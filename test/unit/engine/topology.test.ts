// Topologies of a glycan composition: how residues stack on the aglycone and where acyl groups sit.
import { describe, expect, it } from 'vitest';
import {
  canonical,
  enumerateTopologies,
  makeTopology,
  removedKey,
  searchTopologies,
  type Topology,
} from '../../../engine/candidates/topology.js';
import { compileRuleSet } from '../../../engine/rules/compile.js';
import type { RuleSet } from '../../../engine/rules/schema.js';
import { loadDefaultRuleSet } from '../../../formats/ruleset-file.js';

const compiled = compileRuleSet((await loadDefaultRuleSet()).value as RuleSet);
const units = compiled.units;
const unitIndex = (name: string) => {
  const k = units.findIndex((u) => u.name === name);
  if (k < 0) throw new Error(`no unit ${name}`);
  return k;
};
/** A composition vector from names, e.g. comp('Hex', 'Pen', 'malonyl'). */
const comp = (...names: string[]) => {
  const c = new Uint8Array(units.length);
  for (const n of names) c[unitIndex(n)]!++;
  return c;
};
/** The Y-loss key of a multiset of unit names. */
const key = (...names: string[]) => removedKey(comp(...names));
const notations = (ts: Topology[]) => ts.map((t) => t.notation).sort();

describe('enumerateTopologies: counts', () => {
  it('Hex + Pen: chain Hex-Pen, chain Pen-Hex, two positions = 3', () => {
    expect(notations(enumerateTopologies(comp('Hex', 'Pen'), units))).toEqual([
      '[Hex[Pen]]',
      '[Hex][Pen]',
      '[Pen[Hex]]',
    ]);
  });

  it('Hex × 2: a chain or two positions = 2', () => {
    expect(notations(enumerateTopologies(comp('Hex', 'Hex'), units))).toEqual(['[Hex[Hex]]', '[Hex][Hex]']);
  });

  it.each([
    [1, 1],
    [2, 2],
    [3, 4],
    [4, 9],
    [5, 20],
  ])(
    'n identical residues: as many topologies as rooted trees with n + 1 nodes (n = %i → %i)',
    (n, count) => {
      // Unlabelled rooted forests of n nodes = unlabelled rooted trees of n + 1 nodes: OEIS A000081
      // (1, 1, 2, 4, 9, 20, 48, …) (from memory)
      const ts = enumerateTopologies(comp(...Array<string>(n).fill('Hex')), units);
      expect(ts.length).toBe(count);
      expect(new Set(notations(ts)).size).toBe(count);
    },
  );

  it.each([
    [['Hex', 'Pen'], 3],
    [['Hex', 'Pen', 'dHex'], 16],
    [['Hex', 'Pen', 'dHex', 'HexA'], 125],
  ])('distinct residues %j: (n + 1)^(n − 1) rooted forests = %i', (names, count) => {
    // Rooted forests on n labelled vertices: (n + 1)^(n − 1) (Cayley's formula; common practice)
    const ts = enumerateTopologies(comp(...names), units);
    expect(ts.length).toBe(count);
    expect(new Set(notations(ts)).size).toBe(count);
  });

  it('Hex + malonyl: the acyl group on the aglycone or on the Hex = 2', () => {
    expect(notations(enumerateTopologies(comp('Hex', 'malonyl'), units))).toEqual([
      '[Hex[malonyl]]',
      '[Hex][malonyl]',
    ]);
  });

  it('Hex × 2 + malonyl: 3 placements on the chain, 2 on two positions (symmetric) = 5', () => {
    expect(notations(enumerateTopologies(comp('Hex', 'Hex', 'malonyl'), units))).toEqual(
      [
        '[Hex[Hex[malonyl]]]',
        '[Hex[Hex][malonyl]]',
        '[Hex[Hex]][malonyl]',
        '[Hex[malonyl]][Hex]',
        '[Hex][Hex][malonyl]',
      ].sort(),
    );
  });

  it('C-linked variants only for residues that may be C-linked, and only on the aglycone', () => {
    expect(notations(enumerateTopologies(comp('Hex'), units, { maxCLinked: 1 }))).toEqual([
      '[C-Hex]',
      '[Hex]',
    ]);
    // dHex is O-linked only in the default rule set.
    expect(notations(enumerateTopologies(comp('dHex'), units, { maxCLinked: 1 }))).toEqual(['[dHex]']);
    // A residue on another residue is never C-linked.
    const chain = enumerateTopologies(comp('Hex', 'Hex'), units, { maxCLinked: 2 }).map((t) => t.notation);
    expect(chain).toContain('[C-Hex[Hex]]');
    expect(chain).toContain('[C-Hex][C-Hex]');
    expect(chain.some((n) => /\[Hex\[C-/.test(n) || /\[C-Hex\[C-/.test(n))).toBe(false);
    expect(enumerateTopologies(comp('Hex'), units).some((t) => t.cLinked)).toBe(false); // default: none
  });

  it('stops at the limit', () => {
    expect(
      enumerateTopologies(comp('Hex', 'Pen', 'dHex', 'HexA'), units, { limit: 10 }).length,
    ).toBeLessThanOrEqual(10);
  });
});

describe('Topology predictions', () => {
  const byNotation = (c: Uint8Array, opts = {}) =>
    new Map(enumerateTopologies(c, units, opts).map((t) => [t.notation, t]));
  const hexPen = byNotation(comp('Hex', 'Pen'));

  it('a chain Hex-Pen loses Pen, then Hex: Y losses {∅, Pen, Hex+Pen}', () => {
    const t = hexPen.get('[Hex[Pen]]')!;
    expect(new Set(t.yLosses)).toEqual(new Set([0, key('Pen'), key('Hex', 'Pen')]));
    expect(t.y0Loss).toBe(key('Hex', 'Pen'));
    // B ions: the terminal Pen alone, or the whole disaccharide.
    expect(new Set(t.bUnits)).toEqual(new Set([key('Pen'), key('Hex', 'Pen')]));
  });

  it('two positions lose either residue alone: Y losses {∅, Pen, Hex, Hex+Pen}', () => {
    const t = hexPen.get('[Hex][Pen]')!;
    expect(new Set(t.yLosses)).toEqual(new Set([0, key('Pen'), key('Hex'), key('Hex', 'Pen')]));
    expect(new Set(t.bUnits)).toEqual(new Set([key('Pen'), key('Hex')]));
  });

  it('a chain Pen-Hex loses Hex first: Y losses {∅, Hex, Hex+Pen} (no Y ion for losing Pen alone)', () => {
    const t = hexPen.get('[Pen[Hex]]')!;
    expect(new Set(t.yLosses)).toEqual(new Set([0, key('Hex'), key('Hex', 'Pen')]));
    expect(t.yLosses.has(key('Pen'))).toBe(false);
  });

  it('acyl placement: malonyl on the Hex leaves with it (248.05322); on the aglycone it stays behind', () => {
    const m = byNotation(comp('Hex', 'malonyl'));
    const onHex = m.get('[Hex[malonyl]]')!;
    const onAglycone = m.get('[Hex][malonyl]')!;
    expect(new Set(onHex.yLosses)).toEqual(new Set([0, key('malonyl'), key('Hex', 'malonyl')]));
    expect(onHex.yLosses.has(key('Hex'))).toBe(false); // the Hex cannot leave without its ester
    expect(new Set(onAglycone.yLosses)).toEqual(
      new Set([0, key('malonyl'), key('Hex'), key('Hex', 'malonyl')]),
    );
    expect(onHex.linkage).toEqual(['O', 'ester']);
    // Either way the bare aglycone is reached by losing Hex + malonyl (the Kwon et al. 2019 248.05322 loss).
    expect(onHex.y0Loss).toBe(key('Hex', 'malonyl'));
    expect(onAglycone.y0Loss).toBe(key('Hex', 'malonyl'));
  });

  it('C-linked residues are never lost: no Y ion without them, and Y0 keeps them', () => {
    const m = byNotation(comp('Hex', 'Hex'), { maxCLinked: 1 });
    // Neomangiferin-like: a C-linked Hex plus an O-linked Hex (PMC5632855, Fig. 4).
    const t = m.get('[C-Hex][Hex]')!;
    expect(t.cLinked).toBe(true);
    expect(new Set(t.yLosses)).toEqual(new Set([0, key('Hex')]));
    expect(t.y0Loss).toBe(key('Hex'));
    expect(new Set(t.bUnits)).toEqual(new Set([key('Hex')]));
    const chain = m.get('[C-Hex[Hex]]')!;
    expect(new Set(chain.yLosses)).toEqual(new Set([0, key('Hex')]));
    for (const topo of m.values()) {
      if (!topo.cLinked) continue;
      expect(topo.yLosses.has(key('Hex', 'Hex'))).toBe(false);
    }
    const vitexin = byNotation(comp('Hex'), { maxCLinked: 1 }).get('[C-Hex]')!;
    expect(new Set(vitexin.yLosses)).toEqual(new Set([0]));
    expect(vitexin.y0Loss).toBe(0);
    expect(vitexin.bUnits.size).toBe(0);
  });
});

describe('canonical notation', () => {
  const hex = unitIndex('Hex');
  const pen = unitIndex('Pen');
  const mal = unitIndex('malonyl');

  it('does not depend on the order of instances or of children', () => {
    // Aglycone ← Hex ← (Pen, malonyl) and a second Hex on the aglycone, listed in two different orders.
    const a = canonical([hex, pen, mal, hex], [-1, 0, 0, -1], ['O', 'O', 'ester', 'O'], units);
    const b = canonical([hex, hex, mal, pen], [-1, -1, 1, 1], ['O', 'O', 'ester', 'O'], units);
    expect(a).toBe(b);
    expect(a).toBe('[Hex[Pen][malonyl]][Hex]');
  });

  it('marks C-linked residues and keeps them apart from O-linked ones', () => {
    expect(canonical([hex, hex], [-1, -1], ['C', 'O'], units)).toBe('[C-Hex][Hex]');
    expect(canonical([hex, hex], [-1, -1], ['O', 'C'], units)).toBe('[C-Hex][Hex]');
    expect(canonical([hex, hex], [-1, -1], ['O', 'O'], units)).not.toBe(
      canonical([hex, hex], [-1, -1], ['C', 'O'], units),
    );
  });

  it('every enumerated topology carries its canonical notation, stable from run to run', () => {
    const c = comp('Hex', 'Hex', 'Pen', 'p-coumaroyl');
    const first = enumerateTopologies(c, units, { maxCLinked: 1 });
    const second = enumerateTopologies(c, units, { maxCLinked: 1 });
    expect(notations(second)).toEqual(notations(first));
    for (const t of first) expect(canonical(t.unit, t.parent, t.linkage, units)).toBe(t.notation);
    expect(new Set(notations(first)).size).toBe(first.length);
  });

  it('makeTopology builds the same predictions as the enumeration', () => {
    const t = enumerateTopologies(comp('Hex', 'Pen'), units).find((x) => x.notation === '[Hex[Pen]]')!;
    const again = makeTopology([...t.unit], [...t.parent], [...t.linkage], t.notation, units.length);
    expect(new Set(again.yLosses)).toEqual(new Set(t.yLosses));
    expect(new Set(again.bUnits)).toEqual(new Set(t.bUnits));
    expect(again.y0Loss).toBe(t.y0Loss);
  });
});

describe('searchTopologies (local search for large compositions)', () => {
  it('visits only valid, distinct topologies and climbs from its starts to the best one', () => {
    const c = comp('Hex', 'Hex', 'Pen', 'dHex', 'Pen', 'malonyl');
    const seen = new Map<string, number>();
    // Score: fewer residues on the aglycone is better, and the acyl group should sit on a Pen. Both starts
    // (a chain with the acyl on its last residue, a star) are below the optimum, −1.
    let best = Number.NEGATIVE_INFINITY;
    const score = (t: Topology) => {
      seen.set(t.notation, (seen.get(t.notation) ?? 0) + 1);
      expect(canonical(t.unit, t.parent, t.linkage, units)).toBe(t.notation);
      // Every instance hangs from the aglycone or from a residue instance; no cycles.
      t.parent.forEach((p, i) => {
        if (p >= 0) expect(units[t.unit[p]!]!.kind).toBe('residue');
        let j = i;
        for (let steps = 0; j >= 0; steps++) {
          expect(steps).toBeLessThanOrEqual(t.unit.length);
          j = t.parent[j]!;
        }
      });
      const acyl = t.unit.findIndex((u) => units[u]!.kind === 'acyl');
      const host = t.parent[acyl]!;
      const onPen = host >= 0 && units[t.unit[host]!]!.name === 'Pen';
      const s =
        -t.parent.filter((p, i) => p === -1 && units[t.unit[i]!]!.kind === 'residue').length -
        (onPen ? 0 : 1);
      best = Math.max(best, s);
      return s;
    };
    searchTopologies(c, units, score);
    for (const count of seen.values()) expect(count).toBe(1); // each topology scored once
    expect(seen.size).toBeGreaterThan(5);
    expect(best).toBe(-1); // climbed: one chain, malonyl on a Pen
  });

  it('starts from a star as well as a chain for compositions of up to five units', () => {
    const seen = new Set<string>();
    searchTopologies(comp('Hex', 'Hex', 'Pen', 'dHex', 'malonyl'), units, (t) => {
      seen.add(t.notation);
      return 0;
    });
    // Residues on the aglycone only: the star start is visited.
    expect([...seen].some((n) => n.startsWith('[Hex][Hex]'))).toBe(true);
  });

  it('explores C-linkage only when allowed', () => {
    const visited: string[] = [];
    searchTopologies(comp('Hex', 'Hex', 'Hex', 'Pen', 'Pen'), units, (t) => {
      visited.push(t.notation);
      return t.cLinked ? 1 : 0;
    });
    expect(visited.some((n) => n.includes('C-'))).toBe(false);
    const withC: Topology[] = [];
    searchTopologies(
      comp('Hex', 'Hex', 'Hex', 'Pen', 'Pen'),
      units,
      (t, keep) => {
        withC.push(keep()); // the search's topology is a view valid during the call only
        return t.cLinked ? 1 : 0;
      },
      { maxCLinked: 1 },
    );
    expect(withC.some((t) => t.cLinked)).toBe(true);
    for (const t of withC) expect(t.linkage.filter((l) => l === 'C').length).toBeLessThanOrEqual(1);
    // The kept copies are independent of the view and carry the same predictions as a fresh build.
    expect(new Set(withC.map((t) => t.notation)).size).toBe(withC.length);
    for (const t of withC) {
      const again = makeTopology([...t.unit], [...t.parent], [...t.linkage], t.notation, units.length);
      expect([...t.yLosses]).toEqual([...again.yLosses]);
      expect([...t.bUnits]).toEqual([...again.bUnits]);
      expect(t.y0Loss).toBe(again.y0Loss);
    }
  });

  it('predicts the same Y losses as the brute-force definition for every visited topology', () => {
    // Y ions retain a set of instances closed towards the aglycone that holds every C-linked residue; the key
    // of what is lost is Σ 8^unit (removedKey). Checked against a plain enumeration of all subsets.
    const c = comp('Hex', 'Hex', 'Pen', 'dHex', 'malonyl');
    let checked = 0;
    searchTopologies(
      c,
      units,
      (t) => {
        const n = t.unit.length;
        const expected = new Set<number>();
        for (let mask = 0; mask < 1 << n; mask++) {
          let ok = true;
          let lost = 0;
          for (let i = 0; i < n; i++) {
            const kept = (mask >> i) & 1;
            const p = t.parent[i]!;
            if (kept && p >= 0 && !((mask >> p) & 1)) ok = false;
            if (!kept && t.linkage[i] === 'C') ok = false;
            if (!kept) lost += 8 ** t.unit[i]!;
          }
          if (ok) expected.add(lost);
        }
        expect(new Set(t.yLosses)).toEqual(expected);
        checked++;
        return t.parent.filter((p) => p === -1).length + (t.cLinked ? 0.5 : 0);
      },
      { maxCLinked: 1 },
    );
    expect(checked).toBeGreaterThan(20);
  });
});
