// Shared helpers of the command-line tests: captured streams, temporary files, small MGF texts.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Readable, Writable } from 'node:stream';
import { afterAll, beforeAll } from 'vitest';
import type { CliIo } from '../../../cli/io.js';
import { main } from '../../../cli/main.js';

/** A CliIo whose streams are captured as text. */
export function capture(options: { isTty?: boolean; cwd?: string; stdin?: string } = {}) {
  let out = '';
  let err = '';
  const sink = (append: (s: string) => void) =>
    new Writable({
      write(chunk, _enc, done) {
        append(String(chunk));
        done();
      },
    });
  const io: CliIo = {
    stdout: sink((s) => {
      out += s;
    }),
    stderr: sink((s) => {
      err += s;
    }),
    ...(options.stdin !== undefined ? { stdin: Readable.from([Buffer.from(options.stdin)]) } : {}),
    isTty: options.isTty ?? false,
    cwd: options.cwd ?? process.cwd(),
    env: {},
  };
  return { io, out: () => out, err: () => err };
}

/** Runs `peel score …` in-process. */
export async function score(argv: string[], options: Parameters<typeof capture>[0] = {}) {
  const c = capture(options);
  const code = await main(['score', ...argv], c.io);
  return { code, out: c.out(), err: c.err() };
}

/**
 * A temporary directory for the enclosing describe block, made in its beforeAll and removed in its afterAll
 * (so nothing is made for a block whose tests are all filtered out).
 */
export function useTempDir(): {
  readonly dir: string;
  file: (name: string, content: string | Buffer) => string;
} {
  let t: ReturnType<typeof tempDir> | undefined;
  beforeAll(() => {
    t = tempDir();
  });
  afterAll(() => t?.done());
  return {
    get dir() {
      return t!.dir;
    },
    file: (name, content) => t!.file(name, content),
  };
}

/** A temporary directory, removed by the returned function. */
export function tempDir(): {
  dir: string;
  file: (name: string, content: string | Buffer) => string;
  done: () => void;
} {
  const dir = mkdtempSync(join(tmpdir(), 'peel-score-test-'));
  return {
    dir,
    file: (name, content) => {
      const p = join(dir, name);
      writeFileSync(p, content);
      return p;
    },
    done: () => rmSync(dir, { recursive: true, force: true }),
  };
}

/** One MGF block. */
export function mgfBlock(
  title: string,
  precursor: number,
  charge: string,
  peaks: readonly (readonly [number, number])[],
): string {
  return [
    'BEGIN IONS',
    `TITLE=${title}`,
    `PEPMASS=${precursor}`,
    `CHARGE=${charge}`,
    ...peaks.map(([mz, i]) => `${mz} ${i}`),
    'END IONS',
    '',
  ].join('\n');
}

/**
 * A cyanidin hexoside-pentoside [M]+ spectrum: 581.15009 → 449.10784 (−Pen) → 287.05501 (−Hex).
 * REFERENCE.md §4 (common practice: 581 − 132 = 449, 449 − 162 = 287, cyanidin); masses [calc] from
 * CIAAW/NIST isotopic masses with the electron correction. Intensities invented (simulated).
 */
export const CYANIDIN_HEX_PEN = mgfBlock('cy-hex-pen', 581.15009, '1+', [
  [287.05501, 1000],
  [449.10784, 420],
  [581.15009, 80],
]);
