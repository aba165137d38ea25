import { PassThrough, Writable } from 'node:stream';
import type { RuleSetRef, SpectrumResult } from '../../../../engine/report/result.js';
import type { ResultsWriter } from '../../../../formats/results-writer.js';

/** Hand-built results (the engine is not involved): masses computed from the formulas, NIST masses. */
export const RULESET: RuleSetRef = { name: 'default', version: '1.0.0', sha256: 'ab'.repeat(32) };

/** Cyanidin + Hex + Pen [M]+ (REFERENCE.md §4, trade practice 581 → 449 → 287). */
export const CYANIDIN: SpectrumResult = {
  id: 'S0001',
  index: 0,
  status: 'annotated',
  precursor: { mz: 581.15009, charge: 1, ionType: '[M]+' },
  candidates: [
    {
      rank: 1,
      aglycone: { name: 'cyanidin', formula: 'C15H11O6+', class: 'anthocyanidin', alternatives: [] },
      substituents: [
        { residue: 'Hex', linkage: 'O' },
        { residue: 'Pen', linkage: 'O' },
      ],
      topology: 'cyanidin-Hex-Pen',
      otherTopologies: [
        { topology: 'cyanidin[Hex][Pen]', score: 11.9 },
        { topology: 'cyanidin[Pen[Hex]]', score: 10.2 },
      ],
      formula: 'C26H29O15+',
      ppm: 0.4,
      explainedIntensity: 0.93,
      score: 12.7,
      confidenceLevel: 3,
      matchedPeaks: [
        { mz: 449.10784, label: 'Y1', formula: 'C21H21O11+', ppm: 0.3 },
        { mz: 287.05501, label: 'Y0', formula: 'C15H11O6+', ppm: 0.2 },
      ],
    },
    {
      rank: 2,
      aglycone: { name: 'cyanidin', formula: 'C15H11O6+', class: 'anthocyanidin', alternatives: [] },
      substituents: [
        { residue: 'Hex', linkage: 'O' },
        { residue: 'Pen', linkage: 'O' },
      ],
      topology: 'cyanidin(-Hex)(-Pen)',
      formula: 'C26H29O15+',
      ppm: 0.4,
      explainedIntensity: 0.81,
      score: 9.1,
      confidenceLevel: 3,
      matchedPeaks: [],
    },
  ],
  tree: { nodes: [], edges: [] },
  cautions: ['hexose and pentose stereochemistry not determined'],
  metadata: { rt: 312.5 },
};

/** Kaempferol hexoside [M-H]-: the aglycone ties with the library's other C15H10O6 aglycones. */
export const KAEMPFEROL: SpectrumResult = {
  id: 'S0002',
  index: 1,
  status: 'annotated',
  precursor: { mz: 447.09328, charge: -1, ionType: '[M-H]-' },
  candidates: [
    {
      rank: 1,
      aglycone: {
        name: 'kaempferol',
        formula: 'C15H10O6',
        class: 'flavonol',
        alternatives: ['fisetin', 'luteolin', 'scutellarein'],
      },
      substituents: [{ residue: 'Hex', linkage: 'O' }],
      topology: 'kaempferol-Hex',
      formula: 'C21H19O11-',
      ppm: -1.2,
      explainedIntensity: 0.88,
      score: 10.2,
      confidenceLevel: 3,
      tiedWithPrevious: false,
      matchedPeaks: [{ mz: 285.04046, label: 'Y0', formula: 'C15H9O6-', ppm: -0.8 }],
    },
    {
      rank: 2,
      aglycone: { name: 'unknown', formula: 'C15H10O6', alternatives: [] },
      substituents: [{ residue: 'Hex', linkage: 'C' }],
      topology: 'C15H10O6-Hex(C)',
      formula: 'C21H19O11-',
      ppm: -1.2,
      explainedIntensity: 0.88,
      score: 10.2,
      confidenceLevel: 4,
      tiedWithPrevious: true,
      matchedPeaks: [],
    },
    {
      rank: 3,
      aglycone: { name: 'unknown', formula: 'C14H6O7', alternatives: [] },
      substituents: [
        { residue: 'Hex', linkage: 'O' },
        { residue: 'acetyl', linkage: 'ester' },
      ],
      topology: 'x',
      formula: 'C21H19O11-',
      ppm: -1.2,
      explainedIntensity: 0.5,
      score: 0.0000001,
      confidenceLevel: 5,
      matchedPeaks: [],
    },
  ],
  cautions: [],
};

/** A spectrum left unassigned, with a reason. */
export const UNASSIGNED: SpectrumResult = {
  id: 'S0003',
  index: 2,
  status: 'unassigned',
  reason: { code: 'no-candidate', message: 'no candidate explains 50% of the intensity' },
  precursor: { mz: 300.1, charge: 1, ionType: null },
  candidates: [],
  cautions: [],
};

/** A spectrum in error, with text that CSV must quote and guard. */
export const BROKEN: SpectrumResult = {
  id: '=HYPERLINK("x")',
  index: 3,
  status: 'error',
  reason: { code: 'bad-peak', message: 'peak 3: "NaN", then\nmore, text' },
  candidates: [],
  cautions: [],
};

export const ALL = [CYANIDIN, KAEMPFEROL, UNASSIGNED, BROKEN];

/** Runs a writer over results and returns what it wrote. */
export async function run(
  make: (out: Writable) => ResultsWriter,
  results: readonly SpectrumResult[] = ALL,
): Promise<string> {
  const out = new PassThrough();
  const chunks: Buffer[] = [];
  out.on('data', (c: Buffer) => chunks.push(c));
  const w = make(out);
  await w.begin(RULESET);
  for (const r of results) await w.write(r);
  await w.end();
  out.end();
  await new Promise((r) => out.on('end', r));
  return Buffer.concat(chunks).toString('utf8');
}

/** A slow sink with a one-byte buffer: every write fills it, so writers must wait for 'drain'. */
export function slowSink(): { out: Writable; text: () => string } {
  let text = '';
  const out = new Writable({
    highWaterMark: 1,
    write(chunk: Buffer, _enc, cb) {
      text += chunk.toString('utf8');
      setImmediate(cb);
    },
  });
  return { out, text: () => text };
}
