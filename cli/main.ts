#!/usr/bin/env node
import { pathToFileURL } from 'node:url';
import { type CliIo, type Command, println } from './io.js';

/** Commands by their words; each module is loaded only when used. */
const COMMANDS: Record<string, () => Promise<Command>> = {
  formulas: () => import('./commands/formulas.js').then((m) => m.formulasCommand),
  score: () => import('./commands/score.js').then((m) => m.scoreCommand),
  'rules check': () => import('./commands/rules.js').then((m) => m.rulesCheckCommand),
  'rules diff': () => import('./commands/rules.js').then((m) => m.rulesDiffCommand),
};

const USAGE = `peel — rule-based fragmentation trees for glycosylated natural products (putative identifications)

Usage:
  peel score FILE... [--ppm N] [--precursor-ppm N] [--rules PATH] [--candidates PATH] [--format json|ndjson|csv|mztab] [--out PATH]
  peel formulas MZ... [--charge N] [--ion "[M+H]+"] [--ppm N] [--elements "C0-60 H0-120 N0-10 O0-30 P0-4 S0-4"] [--no-filters] [--json]
  peel rules check FILE
  peel rules diff OLD NEW
`;

/** Runs the command line; returns the exit code (0 ok, 1 failure, 2 usage). */
export async function main(argv: string[], io: CliIo): Promise<number> {
  if (argv.length === 0 || argv[0] === '--help' || argv[0] === '-h' || argv[0] === 'help') {
    println(argv.length === 0 ? io.stderr : io.stdout, USAGE);
    return argv.length === 0 ? 2 : 0;
  }
  const two = argv.slice(0, 2).join(' ');
  const [words, rest] = COMMANDS[two] ? [two, argv.slice(2)] : [argv[0]!, argv.slice(1)];
  const load = COMMANDS[words];
  if (!load) {
    println(io.stderr, `peel: unknown command "${argv[0]}"\n\n${USAGE}`);
    return 2;
  }
  try {
    return await (await load())(rest, io);
  } catch (err) {
    // Classify by code, not class (CONVENTIONS.md §6): usage mistakes exit 2, known failures 1.
    const code = err instanceof Error ? (err as Error & { code?: unknown }).code : undefined;
    if (code === 'usage') {
      println(io.stderr, `peel ${words}: ${(err as Error).message}`);
      return 2;
    }
    if (typeof code === 'string') {
      println(io.stderr, `peel ${words}: ${code}: ${(err as Error).message}`);
      return 1;
    }
    throw err;
  }
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  main(process.argv.slice(2), {
    stdout: process.stdout,
    stderr: process.stderr,
    stdin: process.stdin,
    isTty: Boolean(process.stderr.isTTY),
    cwd: process.cwd(),
    env: process.env,
  }).then(
    (code) => {
      process.exitCode = code;
    },
    (err: unknown) => {
      console.error(err);
      process.exitCode = 1;
    },
  );
}
