// End-to-end throughput: API + workers + Redis on this machine, HTTP submit of a batch of simulated spectra
// to all results stored; beside it, in the same run and on the same Redis, a bare BullMQ no-op queue with
// one job per spectrum. `npm run bench -- e2e [--size 10000] [--batches 1] [--skip-engine]`.
import { type ChildProcess, spawn } from 'node:child_process';
import { createHash, randomBytes } from 'node:crypto';
import { createServer } from 'node:net';
import { fileURLToPath } from 'node:url';
import { Queue, Worker } from 'bullmq';
import { Redis } from 'ioredis';
import { deletePrefix } from '../store/redis.js';
import { machineLine, writeSection } from './report.js';
import { mulberry32 as prng } from './sim/prng.js';

interface Opts {
  size: number;
  batches: number;
  skipEngine: boolean;
  redisUrl: string;
}

function parseArgs(args: string[], env: NodeJS.ProcessEnv): Opts {
  const get = (name: string) => {
    const i = args.indexOf(name);
    return i >= 0 ? args[i + 1] : undefined;
  };
  return {
    size: Number(get('--size') ?? 10_000),
    batches: Number(get('--batches') ?? 1),
    skipEngine: args.includes('--skip-engine'),
    redisUrl: env.REDIS_URL ?? 'redis://127.0.0.1:6379',
  };
}

// ——— simulated spectra (simulated data, not measurements) ———

// Aglycone ions and residue masses from docs REFERENCE §1–3 (computed from NIST isotopic masses).
const AGLYCONE_IONS = [287.05501, 271.0601, 303.04993, 301.07066, 317.06558, 331.08123];
const RESIDUES = [162.05282, 132.04226, 146.05791, 176.03209, 146.03678, 86.00039];

/** A glycoside-like MS2 spectrum of about 30 peaks: a Y-ion ladder plus small noise peaks (simulated). */
function simulatedSpectrum(rand: () => number, id: string) {
  const ppm = () => 1 + (rand() - 0.5) * 6e-6;
  const aglycone = AGLYCONE_IONS[Math.floor(rand() * AGLYCONE_IONS.length)]!;
  const n = 1 + Math.floor(rand() * 3);
  const ladder = [aglycone];
  for (let k = 0; k < n; k++)
    ladder.push(ladder[ladder.length - 1]! + RESIDUES[Math.floor(rand() * RESIDUES.length)]!);
  const precursor = ladder[ladder.length - 1]!;
  const peaks: Array<[number, number]> = ladder.map((mz, k) => [
    Number((mz * ppm()).toFixed(5)),
    Math.round((k === 0 ? 1000 : 200 + rand() * 600) * 10) / 10,
  ]);
  while (peaks.length < 30) {
    peaks.push([Number((60 + rand() * (precursor - 70)).toFixed(5)), Math.round(rand() * 40 * 10) / 10 + 1]);
  }
  peaks.sort((a, b) => a[0] - b[0]);
  return { id, precursor: { mz: Number((precursor * ppm()).toFixed(5)), charge: 1 }, peaks };
}

// ——— helpers ———

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createServer();
    s.once('error', reject);
    s.listen(0, '127.0.0.1', () => {
      const port = (s.address() as { port: number }).port;
      s.close(() => resolve(port));
    });
  });
}

/** Starts API + workers in a child process; resolves with its port. */
async function startService(
  script: string,
  args: string[],
  env: Record<string, string>,
): Promise<{ port: number; child: ChildProcess }> {
  const port = await freePort();
  const child = spawn(process.execPath, [script, ...args], {
    env: { ...process.env, ...env, PORT: String(port), HOST: '127.0.0.1' },
    stdio: ['ignore', 'pipe', 'inherit'],
  });
  child.stdout!.resume();
  const until = Date.now() + 30_000;
  for (;;) {
    try {
      const r = await fetch(`http://127.0.0.1:${port}/readyz`);
      if (r.ok) return { port, child };
    } catch {
      // not listening yet
    }
    if (child.exitCode !== null) throw new Error(`service exited with ${child.exitCode}`);
    if (Date.now() > until) throw new Error('service did not become ready');
    await new Promise((r) => setTimeout(r, 100));
  }
}

async function stopService(child: ChildProcess): Promise<void> {
  if (child.exitCode !== null) return;
  await new Promise<void>((resolve) => {
    child.once('exit', () => resolve());
    child.kill('SIGTERM');
  });
}

interface BatchRun {
  seconds: number;
  spectraPerSecond: number;
  counts: Record<string, number>;
}

/** Submits one batch over HTTP and waits until every result is stored. */
async function submitAndWait(port: number, key: string, spectra: unknown[]): Promise<BatchRun> {
  const body = JSON.stringify({ spectra, metadata: { note: 'simulated benchmark batch' } });
  const headers = { Authorization: `Bearer ${key}`, 'Content-Type': 'application/json' };
  const t0 = performance.now();
  const sub = await fetch(`http://127.0.0.1:${port}/v1/batches`, { method: 'POST', headers, body });
  if (sub.status !== 202) throw new Error(`submit failed: ${sub.status} ${await sub.text()}`);
  const { id } = (await sub.json()) as { id: string };
  for (;;) {
    const s = (await (await fetch(`http://127.0.0.1:${port}/v1/batches/${id}`, { headers })).json()) as {
      state: string;
      counts: Record<string, number>;
    };
    if (s.state === 'completed' || s.state === 'failed') {
      const seconds = (performance.now() - t0) / 1000;
      return { seconds, spectraPerSecond: spectra.length / seconds, counts: s.counts };
    }
    await new Promise((r) => setTimeout(r, 100));
  }
}

/** A bare BullMQ queue with a no-op worker (concurrency 50), one job per spectrum, addBulk of 500. */
async function bareQueue(
  redisUrl: string,
  prefix: string,
  n: number,
): Promise<{ seconds: number; jobsPerSecond: number }> {
  const conn = new Redis(redisUrl, { maxRetriesPerRequest: null });
  const queue = new Queue('bare', { connection: conn, prefix });
  let done = 0;
  let finish: () => void = () => {};
  const all = new Promise<void>((r) => (finish = r));
  const worker = new Worker('bare', async () => {}, {
    connection: conn,
    prefix,
    concurrency: 50,
    removeOnComplete: { count: 1000 },
  });
  worker.on('completed', () => {
    if (++done === n) finish();
  });
  await worker.waitUntilReady();
  const t0 = performance.now();
  for (let i = 0; i < n; i += 500) {
    await queue.addBulk(
      Array.from({ length: Math.min(500, n - i) }, (_, k) => ({ name: 'noop', data: { i: i + k } })),
    );
  }
  await all;
  const seconds = (performance.now() - t0) / 1000;
  await worker.close();
  await queue.close();
  conn.disconnect();
  return { seconds, jobsPerSecond: n / seconds };
}

/** Runs the benchmark and writes its section of docs/performance.md. */
export async function run(args: string[]): Promise<void> {
  const o = parseArgs(args, process.env);
  const run = randomBytes(4).toString('hex');
  const prefix = `{peel-bench-${run}}`;
  const key = `pk_bench_${randomBytes(16).toString('hex')}`;
  const hash = createHash('sha256').update(key).digest('hex');
  const redis = new Redis(o.redisUrl);
  const policy = ((await redis.config('GET', 'maxmemory-policy')) as string[])[1];
  const info = await redis.info('server');
  const redisVersion = /redis_version:(\S+)/.exec(info)?.[1] ?? '?';
  const baseEnv = {
    REDIS_URL: o.redisUrl,
    API_KEYS: `bench:client:${hash}`,
    LOG_LEVEL: 'warn',
    WORKER_CONCURRENCY: '2',
    RATE_LIMIT_PER_MINUTE: '100000',
  };
  const dist = (p: string) => fileURLToPath(new URL(p, import.meta.url));
  let seed = 1;
  const batch = () => {
    const rand = prng(seed++ * 7919);
    return Array.from({ length: o.size }, (_, i) => simulatedSpectrum(rand, `sim-${seed}-${i}`));
  };
  const rows: string[] = [];
  const loadAtStart = (await import('node:os'))
    .loadavg()
    .map((x) => x.toFixed(1))
    .join(' / ');
  const log = (s: string) => console.log(s);
  try {
    log(`e2e: ${o.size} simulated spectra per batch, Redis ${redisVersion} (${policy}) at ${o.redisUrl}`);
    const bare = await bareQueue(o.redisUrl, `${prefix}:bare`, o.size);
    log(`bare BullMQ no-op: ${bare.jobsPerSecond.toFixed(0)} jobs/s`);
    rows.push(
      `| bare BullMQ queue, no-op worker (concurrency 50), 1 job per spectrum | ${o.size} | ${bare.seconds.toFixed(2)} | ${bare.jobsPerSecond.toFixed(0)} jobs/s | 1 |`,
    );

    // The service with a stand-in engine: what the API, queue, store and workers cost per spectrum.
    const plumbing = await startService(
      dist('./e2e-service.js'),
      ['--processor', dist('./e2e-noop-processor.js')],
      { ...baseEnv, KEY_PREFIX: `${prefix}:noop` },
    );
    try {
      const r = await submitAndWait(plumbing.port, key, batch());
      log(`service, no-op engine: ${r.spectraPerSecond.toFixed(0)} spectra/s`);
      rows.push(
        `| service (HTTP submit → results stored), engine replaced by a no-op stand-in | ${o.size} | ${r.seconds.toFixed(2)} | ${r.spectraPerSecond.toFixed(0)} spectra/s | ${(r.spectraPerSecond / bare.jobsPerSecond).toFixed(2)} |`,
      );
    } finally {
      await stopService(plumbing.child);
    }

    let engineNote = '';
    if (!o.skipEngine) {
      const svc = await startService(dist('../api/main.js'), ['--with-workers'], {
        ...baseEnv,
        KEY_PREFIX: `${prefix}:engine`,
      });
      try {
        for (let b = 0; b < o.batches; b++) {
          const r = await submitAndWait(svc.port, key, batch());
          log(`service, Peel engine: ${r.spectraPerSecond.toFixed(1)} spectra/s ${JSON.stringify(r.counts)}`);
          rows.push(
            `| service (HTTP submit → results stored), Peel engine, \`npm start\` | ${o.size} | ${r.seconds.toFixed(2)} | ${r.spectraPerSecond.toFixed(1)} spectra/s | ${(r.spectraPerSecond / bare.jobsPerSecond).toFixed(3)} |`,
          );
          const c = r.counts;
          engineNote = `Result statuses of the last engine batch: ${c.annotated} annotated, ${c.unassigned} unassigned, ${c.error} error.`;
        }
      } finally {
        await stopService(svc.child);
      }
    }

    const md = [
      '## End to end: HTTP submit to stored results (`npm run bench -- e2e`)',
      '',
      `Machine: ${await machineLine()}; Redis ${redisVersion} on the same machine (maxmemory-policy ${policy});`,
      `load average at the start ${loadAtStart} (other work on the machine slows every row alike).`,
      `API and workers in one process tree as \`npm start\` runs them (2 worker threads, chunks of 200 spectra),`,
      `one batch of ${o.size} **simulated** glycoside-like spectra (about 30 peaks each, seeded) submitted as one JSON`,
      'body; time from the POST to the batch state `completed` (every result stored); chunks are queued while the',
      'body is still being stored, so scoring overlaps ingestion. Each batch has new spectra,',
      'so nothing is served from the result cache. The bare queue runs in the same run on the same Redis.',
      '',
      '| what | spectra | seconds | throughput | ratio to bare queue |',
      '|---|---:|---:|---:|---:|',
      ...rows,
      '',
      `Target: at least 500 spectra/s end to end. ${engineNote}`,
    ].join('\n');
    writeSection('e2e', md);
    log(md);
  } finally {
    await deletePrefix(redis, prefix);
    redis.disconnect();
  }
}
