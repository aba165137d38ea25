#!/usr/bin/env node
// Entry point of `npm run demo`: the demo on simulated data (demo/README.md). The only place the demo reads
// the environment (REDIS_URL) and the command line; the work is in demo.ts.
import { resolve } from 'node:path';
import { type DemoMode, runDemo } from './demo.js';

const USAGE = `Usage: npm run demo [-- --in-process | --service] [--out DIR]

Runs Peel on the demo batch (SIMULATED spectra of a fictional scenario, see demo/README.md). When Redis
answers at REDIS_URL (default redis://127.0.0.1:6379) it starts the API and workers in this process, submits
the batch over HTTP, waits for it and fetches the results; otherwise it scores in this process and says so.
It prints a ranked summary and writes results.json, results.csv, results.mztab and report.html to demo/out/.

  --in-process   score in this process even if Redis answers (no API, no queue)
  --service      require the service path: fail if Redis does not answer
  --out DIR      write the files to DIR instead of demo/out`;

function parseArgs(argv: readonly string[]): { mode: DemoMode; outDir?: string } | 'help' {
  let mode: DemoMode = 'auto';
  let outDir: string | undefined;
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    if (a === '--help' || a === '-h') return 'help';
    if (a === '--in-process') mode = 'in-process';
    else if (a === '--service') mode = 'service';
    else if (a === '--out' && argv[i + 1] !== undefined) outDir = resolve(argv[++i]!);
    else if (a.startsWith('--out=')) outDir = resolve(a.slice('--out='.length));
    else throw new Error(`unknown argument "${a}"\n\n${USAGE}`);
  }
  return { mode, ...(outDir ? { outDir } : {}) };
}

async function main(): Promise<number> {
  const args = parseArgs(process.argv.slice(2));
  if (args === 'help') {
    console.log(USAGE);
    return 0;
  }
  const controller = new AbortController();
  const onSignal = () => {
    if (controller.signal.aborted) process.exit(130);
    process.stderr.write('\npeel demo: stopping (shutting the service down and deleting its keys) …\n');
    controller.abort();
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  const redisUrl = process.env.REDIS_URL;
  const outcome = await runDemo({
    mode: args.mode,
    ...(redisUrl ? { redisUrl } : {}),
    ...(args.outDir ? { outDir: args.outDir } : {}),
    stdout: process.stdout,
    stderr: process.stderr,
    tty: process.stderr.isTTY === true,
    signal: controller.signal,
  });
  process.off('SIGINT', onSignal);
  process.off('SIGTERM', onSignal);
  return outcome.ok ? 0 : 1;
}

main().then(
  (code) => {
    process.exitCode = code;
    // Everything is closed by now; should a handle linger, do not hang the terminal.
    setTimeout(() => {
      process.stderr.write('peel demo: warning: something was still open after the demo ended; exiting\n');
      process.exit(code);
    }, 5000).unref();
  },
  (err: unknown) => {
    const e = err as Error & { code?: string };
    if (e?.name === 'DemoError' && e.code === 'aborted') {
      process.stderr.write('peel demo: stopped; nothing left running.\n');
      process.exit(130);
    }
    const known =
      e?.name === 'DemoError' || (typeof e?.message === 'string' && e.message.startsWith('unknown argument'));
    process.stderr.write(`peel demo: failed: ${known ? e.message : (e?.stack ?? String(err))}\n`);
    process.exit(1);
  },
);
