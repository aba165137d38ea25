import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PassThrough } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { CliIo } from '../../../cli/io.js';
import { main } from '../../../cli/main.js';
import { defaultRuleSetPath } from '../../../formats/ruleset-file.js';

function io(cwd: string) {
  const stdout = new PassThrough();
  const stderr = new PassThrough();
  let out = '';
  let err = '';
  stdout.on('data', (d) => {
    out += d;
  });
  stderr.on('data', (d) => {
    err += d;
  });
  const value: CliIo = { stdout, stderr, isTty: false, cwd, env: {} };
  return { io: value, out: () => out, err: () => err };
}

let dir: string;
let defaultText: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'peel-rules-cmd-'));
  defaultText = await readFile(defaultRuleSetPath(), 'utf8');
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('peel rules check', () => {
  it('passes the default rule set and prints its summary', async () => {
    const t = io(dir);
    expect(await main(['rules', 'check', defaultRuleSetPath()], t.io)).toBe(0);
    expect(t.out()).toMatch(/valid, default 1\.2\.0 \(sha256 [0-9a-f]{64}\): 4 residues, 10 acyl groups/);
  });

  it('fails a broken file and names the line', async () => {
    const broken = defaultText.replace('    residue: Hex\n', '    residue: Hexose\n');
    await writeFile(join(dir, 'broken.yaml'), broken);
    const t = io(dir);
    expect(await main(['rules', 'check', 'broken.yaml'], t.io)).toBe(1);
    const line = broken.split('\n').findIndex((l) => l.includes('residue: Hexose')) + 1;
    expect(t.out()).toContain(`broken.yaml:${line}:14: error unknown-residue crossRing[0].residue`);
    expect(t.out()).toContain('invalid, 1 error(s)');
  });

  it('prints JSON with --json, and --strict fails on warnings', async () => {
    const t = io(dir);
    expect(await main(['rules', 'check', defaultRuleSetPath(), '--json', '--strict'], t.io)).toBe(1);
    const doc = JSON.parse(t.out());
    expect(doc.valid).toBe(true);
    expect(doc.ruleset.name).toBe('default');
    expect(doc.warnings.length).toBeGreaterThan(0);
  });

  it('reports a missing file as a failure, and bad usage with exit code 2', async () => {
    const t = io(dir);
    expect(await main(['rules', 'check', 'nope.yaml'], t.io)).toBe(1);
    expect(t.out()).toContain('unreadable');
    expect(await main(['rules', 'check'], io(dir).io)).toBe(2);
    expect(await main(['rules', 'check', 'a', '--frobnicate'], io(dir).io)).toBe(2);
  });
});

describe('peel rules diff', () => {
  it('lists what changed between two versions and warns about the version', async () => {
    const next = defaultText
      .replace('  fragmentPpm: 10 ', '  fragmentPpm: 15 ')
      .replace(
        'aglycones:\n',
        'aglycones:\n  - name: tricetin\n    formula: C15H10O7\n    class: flavone\n    source: test\n',
      );
    await writeFile(join(dir, 'next.yaml'), next);
    const t = io(dir);
    expect(await main(['rules', 'diff', defaultRuleSetPath(), 'next.yaml'], t.io)).toBe(0);
    expect(t.out()).toContain('+ aglycones tricetin [minor]');
    expect(t.out()).toContain('~ tolerances fragmentPpm: fragmentPpm 10 → 15 [minor]');
    expect(t.out()).toContain('warning version-not-bumped');
    const strict = io(dir);
    expect(
      await main(['rules', 'diff', defaultRuleSetPath(), 'next.yaml', '--strict', '--json'], strict.io),
    ).toBe(1);
    const doc = JSON.parse(strict.out());
    expect(doc.from.sha256).not.toBe(doc.to.sha256);
    expect(doc.changes).toHaveLength(2);
  });

  it('fails when a file is not valid', async () => {
    await writeFile(join(dir, 'bad.yaml'), 'name: [');
    const t = io(dir);
    expect(await main(['rules', 'diff', defaultRuleSetPath(), 'bad.yaml'], t.io)).toBe(1);
    expect(t.err()).toContain('syntax');
  });
});
