import { describe, expect, it } from 'vitest';
import { main } from '../../../cli/main.js';
import { capture } from './cli-helpers.js';

async function run(...argv: string[]) {
  const c = capture();
  const code = await main(['formulas', ...argv], c.io);
  return { code, out: c.out(), err: c.err() };
}

interface JsonEntry {
  mz: number;
  formulas: { formula: string; ppm: number; rdbe: number }[];
}

describe('peel formulas', () => {
  it('lists C21H21O11+ near 0 ppm for m/z 449.10784 with --charge 1 (REFERENCE.md §3 [calc])', async () => {
    const { code, out } = await run('449.10784', '--charge', '1', '--json');
    expect(code).toBe(0);
    const parsed = JSON.parse(out) as JsonEntry[];
    expect(parsed).toHaveLength(1);
    expect(parsed[0]!.mz).toBe(449.10784);
    const first = parsed[0]!.formulas[0]!;
    expect(first.formula).toBe('C21H21O11+');
    expect(Math.abs(first.ppm)).toBeLessThan(0.05);
    expect(first.rdbe).toBe(11.5);
  });

  it('prints exactly the documented --json shape, one entry per mass in the order given', async () => {
    // cyanidin hexoside-pentoside [M]+ 581.15 (REFERENCE.md §4: 581 → 449 → 287) and its Y0+ 287.05501 [calc]
    const { code, out } = await run('581.15010', '287.05501', '--charge', '1', '--ppm', '3', '--json');
    expect(code).toBe(0);
    const parsed = JSON.parse(out) as JsonEntry[];
    expect(parsed.map((e) => e.mz)).toEqual([581.1501, 287.05501]);
    for (const entry of parsed) {
      expect(Object.keys(entry)).toEqual(['mz', 'formulas']);
      for (const f of entry.formulas) {
        expect(Object.keys(f)).toEqual(['formula', 'ppm', 'rdbe']);
        expect(f.formula.endsWith('+')).toBe(true);
        expect(Math.abs(f.ppm)).toBeLessThanOrEqual(3);
      }
      const ppms = entry.formulas.map((f) => Math.abs(f.ppm));
      expect([...ppms].sort((a, b) => a - b)).toEqual(ppms);
    }
    expect(parsed[0]!.formulas.map((f) => f.formula)).toContain('C26H29O15+');
    expect(parsed[1]!.formulas.map((f) => f.formula)).toContain('C15H11O6+');
  });

  it('gives neutral molecules with --ion and neutral formulas for a plain mass', async () => {
    const ion = JSON.parse(
      (await run('449.10784', '--ion', '[M+H]+', '--ppm', '2', '--json')).out,
    ) as JsonEntry[];
    expect(ion[0]!.formulas.map((f) => f.formula)).toContain('C21H20O11');
    // REFERENCE.md §2: hexose residue 162.05282 [pub]
    const neutral = JSON.parse((await run('162.05282', '--json')).out) as JsonEntry[];
    expect(neutral[0]!.formulas[0]!.formula).toBe('C6H10O5');
    expect(neutral[0]!.formulas[0]!.rdbe).toBe(2);
  });

  it('applies filters unless --no-filters, and honours --elements', async () => {
    const filtered = JSON.parse((await run('449.10784', '--charge', '1', '--json')).out) as JsonEntry[];
    const all = JSON.parse(
      (await run('449.10784', '--charge', '1', '--no-filters', '--json')).out,
    ) as JsonEntry[];
    expect(all[0]!.formulas.length).toBeGreaterThan(filtered[0]!.formulas.length);
    expect(filtered[0]!.formulas.every((f) => f.rdbe >= -0.5 && f.rdbe % 1 !== 0)).toBe(true);
    const co = JSON.parse(
      (await run('449.10784', '--charge', '1', '--elements', 'C0-30 H0-40 O0-20', '--json')).out,
    ) as JsonEntry[];
    expect(co[0]!.formulas.map((f) => f.formula)).toEqual(['C21H21O11+']);
    // Na on request: [M+Na]+ of glucose C6H12O6Na+ (203.05261 [calc])
    const na = JSON.parse(
      (await run('203.05261', '--charge', '1', '--elements', 'C0-12 H0-24 O0-12 Na0-1', '--json')).out,
    ) as JsonEntry[];
    expect(na[0]!.formulas.map((f) => f.formula)).toContain('C6H12NaO6+');
  });

  it('prints a readable table that says what the numbers are and that results are putative', async () => {
    const { code, out } = await run('449.10784', '--charge', '1', '--limit', '3');
    expect(code).toBe(0);
    expect(out).toMatch(/formula\s+m\/z\s+Δ mDa\s+ppm\s+RDBE/);
    expect(out).toMatch(/1\s+C21H21O11\+\s+449\.10784/);
    expect(out).toContain('charge +1');
    expect(out).toMatch(/putative/i);
    const neutral = await run('162.05282');
    expect(neutral.out).toContain('neutral monoisotopic mass');
    const ion = await run('449.10784', '--ion', '[M+H]+');
    expect(ion.out).toContain('neutral molecule M');
    expect(ion.out).toContain('ion m/z');
    const none = await run('0.5');
    expect(none.out).toContain('no formula within tolerance');
  });

  it.each([
    [[]],
    [['abc']],
    [['-5']],
    [['449.1', '--charge', 'x']],
    [['449.1', '--charge', '1', '--ion', '[M+H]+']],
    [['449.1', '--ion', 'M+H']],
    [['449.1', '--ppm', '0']],
    [['449.1', '--elements', 'C0-']],
    [['449.1', '--electrons', 'some']],
    [['449.1', '--bogus']],
    [['449.1', '--ppm']],
  ])('exits 2 with a usage message for %j', async (argv) => {
    const { code, err, out } = await run(...argv);
    expect(code).toBe(2);
    expect(err).toMatch(/^peel formulas: /);
    expect(out).toBe('');
  });

  it('accepts negative charges and --flag=value', async () => {
    // quercetin 3-glucoside [M-H]- 463.08820 (REFERENCE.md §4 [calc])
    const { code, out } = await run('463.08820', '--charge=-1', '--ppm=2', '--json');
    expect(code).toBe(0);
    expect((JSON.parse(out) as JsonEntry[])[0]!.formulas.map((f) => f.formula)).toContain('C21H19O12-');
  });
});
