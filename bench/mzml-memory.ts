// Benchmark: stream a large simulated mzML file through the reader; measure spectra/s and peak memory (RSS).
// `npm run bench -- mzml-memory [--spectra N] [--keep]`
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { readSpectraFile } from '../formats/detect.js';
import { createMzmlStats } from '../formats/mzml.js';
import { generateMzml } from './gen/mzml.js';
import { machineLine, writeSection, runJsonChild } from './report.js';

/** Peak RSS the issue allows while 100,000 spectra stream through. */
const TARGET_RSS_MB = 300;

interface ChildResult {
  spectra: number;
  errors: number;
  skipped: Record<string, number>;
  peaks: number;
  seconds: number;
  cpuSeconds: number;
  baselineRssMb: number;
  peakRssSampledMb: number;
  maxRssMb: number;
  rssAtQuarterMb: number[];
}

const mb = (bytes: number) => bytes / 2 ** 20;

/** Runs in the child process: reads the file and reports what it measured as one JSON line. */
async function child(path: string): Promise<void> {
  const baseline = process.memoryUsage().rss;
  let peak = baseline;
  const timer = setInterval(() => {
    peak = Math.max(peak, process.memoryUsage().rss);
  }, 20);
  const stats = createMzmlStats();
  const t0 = process.hrtime.bigint();
  const cpu0 = process.cpuUsage();
  let spectra = 0;
  let errors = 0;
  let peaks = 0;
  const quarters: number[] = [];
  const expected = Number(process.argv[4] ?? 0);
  for await (const item of readSpectraFile(path, { stats })) {
    if (item.kind === 'spectrum') {
      spectra++;
      peaks += item.spectrum.peaks.length;
      if (expected > 0 && spectra % Math.ceil(expected / 4) === 0)
        quarters.push(mb(process.memoryUsage().rss));
    } else errors++;
  }
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  const cpu = process.cpuUsage(cpu0);
  const cpuSeconds = (cpu.user + cpu.system) / 1e6;
  clearInterval(timer);
  peak = Math.max(peak, process.memoryUsage().rss);
  const result: ChildResult = {
    spectra,
    errors,
    skipped: stats.skipped,
    peaks,
    seconds,
    cpuSeconds,
    baselineRssMb: mb(baseline),
    peakRssSampledMb: mb(peak),
    // resourceUsage().maxRSS is in kilobytes.
    maxRssMb: process.resourceUsage().maxRSS / 1024,
    rssAtQuarterMb: quarters,
  };
  process.stdout.write(`${JSON.stringify(result)}\n`);
}

function runChild(path: string, expected: number): Promise<ChildResult> {
  return runJsonChild<ChildResult>(import.meta.url, [path, String(expected)], 'reader');
}

/** Generates the file, streams it through the reader in a fresh process, and writes the section. */
export async function run(args: string[]): Promise<void> {
  const arg = (name: string) => {
    const i = args.indexOf(name);
    return i >= 0 ? args[i + 1] : undefined;
  };
  const count = Number(arg('--spectra') ?? 100_000);
  const keep = args.includes('--keep');
  const dir = mkdtempSync(join(tmpdir(), 'peel-bench-mzml-'));
  const path = join(dir, 'simulated.mzML');
  try {
    const g0 = Date.now();
    const gen = await generateMzml(path, { spectra: count, seed: 20240501 });
    const genSeconds = (Date.now() - g0) / 1000;
    const size = statSync(path).size;
    console.log(
      `generated ${gen.ms2} MS2 + ${gen.ms1} MS1 spectra, ${mb(size).toFixed(0)} MB, in ${genSeconds.toFixed(1)} s`,
    );
    const load = loadavg()[0]!;
    const r = await runChild(path, count);
    console.log(JSON.stringify(r));
    if (r.spectra !== count || r.errors !== 0) {
      throw new Error(`expected ${count} spectra and no errors, got ${r.spectra} and ${r.errors}`);
    }
    const peak = Math.max(r.peakRssSampledMb, r.maxRssMb);
    const verdict = peak < TARGET_RSS_MB ? 'met' : '**not met**';
    const md = `## mzML streaming read (\`npm run bench -- mzml-memory\`)

${await machineLine()}

A simulated mzML 1.1 file (\`bench/gen/mzml.ts\`, seeded; not measured data): ${gen.ms2.toLocaleString('en-US')} MS2
spectra with 30–100 peaks each plus ${gen.ms1.toLocaleString('en-US')} MS1 survey scans of 200 peaks, zlib-compressed
64-bit arrays, ${mb(size).toFixed(0)} MB on disk. Read with \`readSpectraFile\` (the path the CLI uses) in a fresh
Node process that only counts what it gets. Load average when the read started: ${load.toFixed(1)} on
${cpus().length} cores (other work on the machine slows the wall clock; CPU time is less affected).

| measure | value |
|---|---|
| MS2 spectra read | ${r.spectra.toLocaleString('en-US')} (errors: ${r.errors}; MS1 skipped: ${(r.skipped['1'] ?? 0).toLocaleString('en-US')}) |
| peaks read | ${r.peaks.toLocaleString('en-US')} |
| wall time (CPU time of the reading process) | ${r.seconds.toFixed(2)} s (${r.cpuSeconds.toFixed(2)} s) |
| throughput, wall clock | ${Math.round(r.spectra / r.seconds).toLocaleString('en-US')} MS2 spectra/s, ${(mb(size) / r.seconds).toFixed(1)} MB/s |
| throughput per CPU-second | ${Math.round(r.spectra / r.cpuSeconds).toLocaleString('en-US')} MS2 spectra/s |
| RSS before reading | ${r.baselineRssMb.toFixed(0)} MB |
| RSS after ¼, ½, ¾, all of the spectra | ${r.rssAtQuarterMb.map((x) => x.toFixed(0)).join(', ')} MB |
| peak RSS (sampled every 20 ms / \`maxRSS\`) | ${r.peakRssSampledMb.toFixed(0)} MB / ${r.maxRssMb.toFixed(0)} MB |
| target: peak RSS < ${TARGET_RSS_MB} MB | ${verdict} |
`;
    writeSection('mzml-memory', md);
    console.log(md);
  } finally {
    if (keep) console.log(`kept ${path}`);
    else rmSync(dir, { recursive: true, force: true });
  }
}

if (process.argv[2] === '--child' && process.argv[1] === fileURLToPath(import.meta.url)) {
  await child(process.argv[3]!);
}
