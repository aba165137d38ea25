import { parseFormula } from '../chem/formula.js';
import { type Counts, countsMass, countsOf, NE } from '../graph/counts.js';
import type { AglyconeGroup, Composition, CompiledRuleSet } from '../rules/compile.js';

/**
 * Peel's stacking notation (docs/stacking-notation.md): the aglycone, then each unit bound to it in square
 * brackets, units bound to a unit nested inside its brackets. `cyanidin[Hex[Pen]]` is a pentose on a hexose on
 * cyanidin; `cyanidin[Hex][Hex]` two hexoses on two positions; `apigenin[C-Hex]` a C-glycoside;
 * `cyanidin[Hex[malonyl]]` a malonylated hexose; `<C16H12O6>[Hex]` an aglycone known only by its formula.
 */
export interface Stacking {
  readonly aglycone:
    | { kind: 'library'; group: AglyconeGroup; name: string }
    | { kind: 'unknown'; counts: Counts };
  readonly unit: number[];
  readonly parent: number[];
  readonly linkage: ('O' | 'C' | 'ester')[];
  readonly composition: Composition;
}

/** Codes of stacking strings that cannot be read. */
export type StackingErrorCode =
  | 'stacking-syntax'
  | 'stacking-unknown-aglycone'
  | 'stacking-unknown-unit'
  | 'stacking-linkage';

/** A stacking string that cannot be read against the rule set. */
export class StackingError extends Error {
  override readonly name = 'StackingError';
  constructor(
    readonly code: StackingErrorCode,
    message: string,
  ) {
    super(message);
  }
}

/** Reads a stacking string against the rule set's aglycones and units. */
export function parseStacking(text: string, rules: CompiledRuleSet): Stacking {
  const s = text.trim();
  const open = s.indexOf('[');
  const head = (open < 0 ? s : s.slice(0, open)).trim();
  if (!head) throw new StackingError('stacking-syntax', `no aglycone in "${text}"`);
  let aglycone: Stacking['aglycone'];
  if (head.startsWith('<') && head.endsWith('>')) {
    let counts: Counts;
    try {
      counts = countsOf(parseFormula(head.slice(1, -1)));
    } catch {
      throw new StackingError('stacking-syntax', `cannot read the aglycone formula ${head} in "${text}"`);
    }
    aglycone = { kind: 'unknown', counts };
  } else {
    const lower = head.toLowerCase();
    const group = rules.aglyconeGroups.find((g) => g.members.some((m) => m.name.toLowerCase() === lower));
    if (!group)
      throw new StackingError('stacking-unknown-aglycone', `no aglycone named "${head}" in the rule set`);
    aglycone = {
      kind: 'library',
      group,
      name: group.members.find((m) => m.name.toLowerCase() === lower)!.name,
    };
  }
  const unit: number[] = [];
  const parent: number[] = [];
  const linkage: ('O' | 'C' | 'ester')[] = [];
  let pos = open < 0 ? s.length : open;
  const stack: number[] = [];
  while (pos < s.length) {
    const ch = s[pos]!;
    if (ch === '[') {
      const end = s.slice(pos + 1).search(/[[\]]/);
      if (end < 0) throw new StackingError('stacking-syntax', `unclosed "[" in "${text}"`);
      let name = s.slice(pos + 1, pos + 1 + end).trim();
      let link: 'O' | 'C' | 'ester' = 'O';
      if (/^C-/.test(name)) {
        link = 'C';
        name = name.slice(2);
      } else if (/^O-/.test(name)) name = name.slice(2);
      const u = rules.units.findIndex((x) => x.name === name);
      if (u < 0)
        throw new StackingError(
          'stacking-unknown-unit',
          `no residue or acyl group named "${name}" in the rule set`,
        );
      const up = stack.length ? stack[stack.length - 1]! : -1;
      if (rules.units[u]!.kind === 'acyl') {
        if (link === 'C')
          throw new StackingError('stacking-linkage', `acyl group ${name} cannot be C-linked`);
        link = 'ester';
      } else if (link === 'C' && (up !== -1 || !rules.units[u]!.linkages.includes('C'))) {
        throw new StackingError('stacking-linkage', `${name} can be C-linked only to the aglycone`);
      }
      if (up >= 0 && rules.units[unit[up]!]!.kind === 'acyl') {
        throw new StackingError('stacking-syntax', `nothing can hang from an acyl group in "${text}"`);
      }
      unit.push(u);
      parent.push(up);
      linkage.push(link);
      stack.push(unit.length - 1);
      pos += 1 + end;
    } else if (ch === ']') {
      if (!stack.length) throw new StackingError('stacking-syntax', `unbalanced "]" in "${text}"`);
      stack.pop();
      pos++;
    } else if (/\s/.test(ch)) pos++;
    else throw new StackingError('stacking-syntax', `unexpected "${ch}" in "${text}"`);
  }
  if (stack.length) throw new StackingError('stacking-syntax', `unclosed "[" in "${text}"`);
  const units = new Uint8Array(rules.units.length);
  for (const u of unit) units[u]!++;
  const counts = new Int32Array(NE);
  let residues = 0;
  let acyls = 0;
  units.forEach((n, u) => {
    for (let e = 0; e < NE; e++) counts[e]! += n * rules.units[u]!.counts[e]!;
    if (rules.units[u]!.kind === 'residue') residues += n;
    else acyls += n;
  });
  return {
    aglycone,
    unit,
    parent,
    linkage,
    composition: { units, counts, mass: countsMass(counts), residues, acyls },
  };
}
