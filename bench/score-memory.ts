// Benchmark (issue 3): 100,000 simulated glycoside spectra in one mzML file, scored by `peel score` (the
// command's own code path: main → scoreCommand → scoreFiles, NDJSON to /dev/null) in a fresh Node process;
// measures peak RSS (target < 300 MB) and throughput.
// `npm run bench -- score-memory [--spectra N] [--seed S] [--keep]`
import { once } from 'node:events';
import { createWriteStream, mkdtempSync, rmSync, statSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { Writable } from 'node:stream';
import { fileURLToPath } from 'node:url';
import type { Spectrum } from '../engine/spectrum/spectrum.js';
import { encodeBinaryArray } from '../formats/mzml-binary.js';
import { machineLine, writeSection, runJsonChild } from './report.js';
import { GENERATOR, iterateSet, SIMULATED_NOTE } from './sim/generate.js';

/** Peak RSS the issue allows while 100,000 spectra stream through. */
const TARGET_RSS_MB = 300;
const mb = (bytes: number) => bytes / 2 ** 20;

const esc = (s: string) =>
  s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
const cv = (acc: string, name: string, value = '', unit = '') =>
  `<cvParam cvRef="${acc.slice(0, acc.indexOf(':'))}" accession="${acc}" name="${name}" value="${esc(value)}"${unit}/>`;
const UNIT_MZ = ' unitCvRef="MS" unitAccession="MS:1000040" unitName="m/z"';
const UNIT_SECOND = ' unitCvRef="UO" unitAccession="UO:0000010" unitName="second"';

function arrays(mz: number[], intensity: number[]): string {
  const one = (values: number[], term: string) => {
    const b64 = encodeBinaryArray(values, 'zlib', 64);
    return (
      `<binaryDataArray encodedLength="${b64.length}">${cv('MS:1000523', '64-bit float')}` +
      `${cv('MS:1000574', 'zlib compression')}${term}<binary>${b64}</binary></binaryDataArray>`
    );
  };
  return (
    '<binaryDataArrayList count="2">' +
    one(mz, cv('MS:1000514', 'm/z array', '', UNIT_MZ)) +
    one(
      intensity,
      cv(
        'MS:1000515',
        'intensity array',
        '',
        ' unitCvRef="MS" unitAccession="MS:1000131" unitName="number of counts"',
      ),
    ) +
    '</binaryDataArrayList>'
  );
}

/** One MS2 spectrum element (centroid, zlib 64-bit arrays, precursor with charge, scan start time). */
function spectrumXml(s: Spectrum, index: number): string {
  const negative = s.polarity === 'negative' || (s.precursor.charge ?? 1) < 0;
  const charge =
    s.precursor.charge === undefined
      ? ''
      : cv('MS:1000041', 'charge state', String(Math.abs(s.precursor.charge)));
  const rt = s.rt === undefined ? '' : cv('MS:1000016', 'scan start time', String(s.rt), UNIT_SECOND);
  return (
    `<spectrum index="${index}" id="${esc(s.id)}" defaultArrayLength="${s.peaks.length}">\n` +
    cv('MS:1000511', 'ms level', '2') +
    (negative ? cv('MS:1000129', 'negative scan') : cv('MS:1000130', 'positive scan')) +
    cv('MS:1000127', 'centroid spectrum') +
    `\n<scanList count="1">${cv('MS:1000795', 'no combination')}<scan>${rt}</scan></scanList>\n` +
    '<precursorList count="1"><precursor><selectedIonList count="1"><selectedIon>' +
    cv('MS:1000744', 'selected ion m/z', String(s.precursor.mz), UNIT_MZ) +
    charge +
    '</selectedIon></selectedIonList><activation>' +
    cv('MS:1000133', 'collision-induced dissociation') +
    '</activation></precursor></precursorList>\n' +
    arrays(
      s.peaks.map((p) => p[0]),
      s.peaks.map((p) => p[1]),
    ) +
    '\n</spectrum>\n'
  );
}

/** Streams `count` simulated spectra (bench/sim, seeded) into an mzML 1.1 file; memory stays small. */
async function writeSimulatedMzml(path: string, count: number, seed: number | string): Promise<void> {
  const out = createWriteStream(path);
  const write = async (s: string) => {
    if (!out.write(s)) await once(out, 'drain');
  };
  await write(
    '<?xml version="1.0" encoding="utf-8"?>\n' +
      '<mzML xmlns="http://psi.hupo.org/ms/mzml" id="peel-score-memory" version="1.1.0">\n' +
      `<!-- ${esc(SIMULATED_NOTE)} -->\n` +
      '<cvList count="2"><cv id="MS" fullName="PSI-MS" URI="https://purl.obolibrary.org/obo/ms.obo"/>' +
      '<cv id="UO" fullName="Unit Ontology" URI="https://purl.obolibrary.org/obo/uo.obo"/></cvList>\n' +
      `<fileDescription><fileContent>${cv('MS:1000580', 'MSn spectrum')}</fileContent></fileDescription>\n` +
      `<softwareList count="1"><software id="peel-sim" version="1">${cv('MS:1000799', 'custom unreleased software tool', GENERATOR)}</software></softwareList>\n` +
      '<instrumentConfigurationList count="1"><instrumentConfiguration id="IC1"/></instrumentConfigurationList>\n' +
      `<dataProcessingList count="1"><dataProcessing id="DP1"><processingMethod order="1" softwareRef="peel-sim">${cv('MS:1000544', 'Conversion to mzML')}</processingMethod></dataProcessing></dataProcessingList>\n` +
      `<run id="simulated" defaultInstrumentConfigurationRef="IC1">\n<spectrumList count="${count}" defaultDataProcessingRef="DP1">\n`,
  );
  let batch = '';
  let i = 0;
  for (const x of iterateSet({ count, seed })) {
    batch += spectrumXml(x.spectrum, i++);
    if (batch.length > 1 << 16) {
      await write(batch);
      batch = '';
    }
  }
  await write(`${batch}</spectrumList>\n</run>\n</mzML>\n`);
  out.end();
  await once(out, 'finish');
}

interface ChildResult {
  code: number;
  summary: string;
  seconds: number;
  cpuSeconds: number;
  baselineRssMb: number;
  peakRssSampledMb: number;
  maxRssMb: number;
  /** RSS sampled every 5 s of the run. */
  rssSeriesMb: number[];
}

/** In the child: runs `peel score FILE --format ndjson --out /dev/null` in-process and reports what it measured. */
async function child(path: string): Promise<void> {
  const { main } = await import('../cli/main.js');
  const baseline = process.memoryUsage().rss;
  let peak = baseline;
  const series: number[] = [];
  const sampler = setInterval(() => {
    peak = Math.max(peak, process.memoryUsage().rss);
  }, 20);
  const slow = setInterval(() => series.push(mb(process.memoryUsage().rss)), 5000);
  let stderr = '';
  const sink = new Writable({
    write(chunk, _enc, done) {
      stderr += String(chunk);
      done();
    },
  });
  const t0 = process.hrtime.bigint();
  const cpu0 = process.cpuUsage();
  const code = await main(['score', path, '--format', 'ndjson', '--out', '/dev/null'], {
    stdout: sink,
    stderr: sink,
    isTty: false,
    cwd: process.cwd(),
    env: {},
  });
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  const cpu = process.cpuUsage(cpu0);
  clearInterval(sampler);
  clearInterval(slow);
  peak = Math.max(peak, process.memoryUsage().rss);
  const result: ChildResult = {
    code,
    summary: stderr.trim().split('\n').at(-1) ?? '',
    seconds,
    cpuSeconds: (cpu.user + cpu.system) / 1e6,
    baselineRssMb: mb(baseline),
    peakRssSampledMb: mb(peak),
    // resourceUsage().maxRSS is in kilobytes.
    maxRssMb: process.resourceUsage().maxRSS / 1024,
    rssSeriesMb: series,
  };
  process.stdout.write(`${JSON.stringify(result)}\n`);
}

function runChild(path: string): Promise<ChildResult> {
  return runJsonChild<ChildResult>(import.meta.url, [path], 'scoring');
}

/** Generates the mzML file, scores it with `peel score` in a fresh process, and writes the section. */
export async function run(args: string[]): Promise<void> {
  const arg = (name: string) => {
    const i = args.indexOf(name);
    return i >= 0 ? args[i + 1] : undefined;
  };
  const count = Number(arg('--spectra') ?? 100_000);
  const seedText = arg('--seed') ?? '20261203';
  const seed = /^\d+$/.test(seedText) ? Number(seedText) : seedText;
  const keep = args.includes('--keep');
  if (!Number.isInteger(count) || count < 1) {
    throw new Error('usage: npm run bench -- score-memory [--spectra N] [--seed S] [--keep]');
  }
  const dir = mkdtempSync(join(tmpdir(), 'peel-bench-score-'));
  const path = join(dir, 'simulated-glycosides.mzML');
  try {
    const g0 = Date.now();
    await writeSimulatedMzml(path, count, seed);
    const genSeconds = (Date.now() - g0) / 1000;
    const size = statSync(path).size;
    console.log(
      `generated ${count} simulated spectra, ${mb(size).toFixed(0)} MB, in ${genSeconds.toFixed(1)} s`,
    );
    const loadBefore = loadavg();
    const r = await runChild(path);
    const loadAfter = loadavg();
    console.log(JSON.stringify(r));
    const m =
      /^peel score: ([\d,]+) spectra .*: ([\d,]+) annotated, ([\d,]+) unassigned, ([\d,]+) errors?/.exec(
        r.summary,
      );
    const n = (s: string | undefined) => Number((s ?? '').replace(/,/g, ''));
    if (r.code !== 0 || !m || n(m[1]) !== count) {
      throw new Error(`expected exit 0 and ${count} spectra scored, got exit ${r.code}: ${r.summary}`);
    }
    const peak = Math.max(r.peakRssSampledMb, r.maxRssMb);
    const verdict = peak < TARGET_RSS_MB ? 'met' : '**not met**';
    const la = (l: number[]) => l.map((x) => x.toFixed(2)).join(' / ');
    const fmt = (x: number) => Math.round(x).toLocaleString('en-US');
    const md = `## \`peel score\` on a large mzML file: memory and throughput (\`npm run bench -- score-memory\`)

${await machineLine()}

${fmt(count)} simulated glycoside and decoy MS2 spectra (${GENERATOR}, seed ${seed}; simulated data, not measurements)
written as one mzML 1.1 file (zlib-compressed 64-bit arrays, ${mb(size).toFixed(0)} MB; generated in ${genSeconds.toFixed(0)} s, not
timed), scored in a fresh Node process by the command itself — \`peel score FILE --format ndjson --out /dev/null\`
through \`main()\` — streaming in and out on one thread. Load average (1 / 5 / 15 min) before: ${la(loadBefore)},
after: ${la(loadAfter)} on ${cpus().length} cores.

| measure | value |
|---|---|
| spectra scored | ${fmt(n(m[1]))}: ${fmt(n(m[2]))} annotated, ${fmt(n(m[3]))} unassigned, ${fmt(n(m[4]))} errors |
| wall time (CPU time) | ${r.seconds.toFixed(1)} s (${r.cpuSeconds.toFixed(1)} s) |
| throughput, wall clock / per CPU-second | ${fmt(count / r.seconds)} / ${fmt(count / r.cpuSeconds)} spectra/s |
| RSS before scoring | ${r.baselineRssMb.toFixed(0)} MB |
| RSS every 5 s (min / median / last) | ${series(r.rssSeriesMb)} |
| peak RSS (sampled every 20 ms / \`maxRSS\`) | ${r.peakRssSampledMb.toFixed(0)} MB / ${r.maxRssMb.toFixed(0)} MB |
| target: peak RSS < ${TARGET_RSS_MB} MB | ${verdict} |
`;
    writeSection('score-memory', md);
    console.log(md);
  } finally {
    if (keep) console.log(`kept ${path}`);
    else rmSync(dir, { recursive: true, force: true });
  }
}

function series(values: number[]): string {
  if (values.length === 0) return '–';
  const sorted = [...values].sort((a, b) => a - b);
  return `${sorted[0]!.toFixed(0)} / ${sorted[Math.floor(sorted.length / 2)]!.toFixed(0)} / ${values.at(-1)!.toFixed(0)} MB (${values.length} samples)`;
}

if (process.argv[2] === '--child' && process.argv[1] === fileURLToPath(import.meta.url)) {
  await child(process.argv[3]!);
}
