import { Writable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import type { SimTruth } from '../../../bench/sim/index.js';
import { createDemoProgress } from '../../../demo/progress.js';
import { stickSpectrumSvg } from '../../../demo/report-html.js';
import { bestCell, formatSummaryTable, stackingPart, summarise } from '../../../demo/summary.js';
import type { CandidateResult, SpectrumResult } from '../../../engine/report/result.js';

// Invented, simulated values: shapes of results and truths as the engine and the simulator write them.

function candidate(over: Partial<CandidateResult> = {}): CandidateResult {
  return {
    rank: 1,
    aglycone: { name: 'cyanidin', formula: 'C15H11O6+', alternatives: ['kaempferol'] },
    substituents: [
      { residue: 'Hex', linkage: 'O' },
      { residue: 'Pen', linkage: 'O' },
    ],
    topology: 'cyanidin[Hex[Pen]]',
    ionType: '[M]+',
    formula: 'C26H29O15+',
    ppm: 0.4,
    explainedIntensity: 0.93,
    score: 12.7,
    confidenceLevel: 3,
    matchedPeaks: [
      { mz: 287.055, label: 'Y0', formula: 'C15H11O6+', ppm: 0.2 },
      { mz: 449.1078, label: 'Y1', formula: 'C21H21O11+', ppm: 0.3 },
    ],
    ...over,
  };
}

function truth(over: Partial<SimTruth> = {}): SimTruth {
  return {
    id: 'S1',
    simulated: true,
    decoy: false,
    description: 'simulated',
    ionType: '[M]+',
    charge: 1,
    polarity: 'positive',
    precursorMz: 581.1501,
    aglycone: {
      name: 'kaempferol',
      library: true,
      class: 'flavonol',
      neutralFormula: 'C15H10O6',
      ionFormula: 'C15H11O6+',
    },
    residues: [
      { residue: 'Hex', linkage: 'O' },
      { residue: 'Pen', linkage: 'O' },
    ],
    acyls: [],
    topology: 'Hex(Pen)',
    sites: [{ position: '3', linkage: 'O', tree: 'Hex(Pen)' }],
    cGlycoside: false,
    lambdaGiven: false,
    ...over,
  };
}

const annotated = (id: string, c: CandidateResult[]): SpectrumResult => ({
  id,
  status: 'annotated',
  precursor: { mz: 581.1501, charge: 1, ionType: '[M]+' },
  candidates: c,
  cautions: [],
});

describe('demo summary', () => {
  it('counts a same-formula alternative as agreeing with the truth, and a decoy only when unassigned', () => {
    const results: SpectrumResult[] = [
      annotated('S1', [
        candidate(),
        candidate({ rank: 2, topology: 'cyanidin[Hex][Pen]', tiedWithPrevious: true }),
      ]),
      annotated('S2', [candidate({ substituents: [{ residue: 'Hex', linkage: 'O' }] })]),
      annotated('D1', [candidate()]),
      {
        id: 'D2',
        status: 'unassigned',
        reason: { code: 'no-precursor-match', message: '…' },
        candidates: [],
        cautions: [],
      },
    ];
    const truths = [
      truth(),
      truth({ id: 'S2' }),
      truth({ id: 'D1', decoy: true, decoyKind: 'peptide' }),
      truth({ id: 'D2', decoy: true, decoyKind: 'lipid' }),
    ];
    const { rows, tally } = summarise(results, truths, ['cyanidin', 'kaempferol']);
    expect(rows.map((r) => r.truth)).toEqual(['agrees', 'differs', 'differs', 'agrees']);
    expect(tally).toMatchObject({
      spectra: 4,
      annotated: 3,
      unassigned: 1,
      glycosides: 2,
      glycosidesAgree: 1,
      stackingAgree: 1,
      decoys: 2,
      decoysUnassigned: 1,
    });
    expect(rows[0]!.tied).toBe(true);
    expect(rows[1]!.tied).toBe(false);
  });

  it('writes the best candidate as aglycone (+alternatives) and its stacking', () => {
    const { rows } = summarise([annotated('S1', [candidate()])], undefined, []);
    expect(stackingPart('cyanidin[Hex[Pen]]')).toBe('[Hex[Pen]]');
    expect(stackingPart('<C20H18O6>[Hex[dHex]]')).toBe('[Hex[dHex]]');
    expect(bestCell(rows[0]!)).toBe('cyanidin (+1) [Hex[Pen]]');
    const table = formatSummaryTable(rows, false).split('\n');
    expect(table[0]).toMatch(/^# +spectrum +status +best candidate +ion +explained +level +tie$/);
    expect(table[2]).toMatch(/^1 +S1 +annotated +cyanidin \(\+1\) \[Hex\[Pen\]\] +\[M\]\+ +93\.0% +3$/);
  });
});

class Sink extends Writable {
  text = '';
  columns = 120;
  override _write(chunk: Buffer | string, _enc: BufferEncoding, cb: () => void): void {
    this.text += chunk.toString();
    cb();
  }
}

describe('demo progress', () => {
  it('prints a plain line per quarter off a terminal', () => {
    const s = new Sink();
    const p = createDemoProgress({ stream: s, tty: false });
    for (let i = 0; i <= 8; i++) p.update({ done: i, total: 8 });
    expect(
      s.text
        .trim()
        .split('\n')
        .map((l) => l.trim().split(' ')[0]),
    ).toEqual(['0%', '25%', '50%', '75%', '100%']);
    expect(s.text).not.toContain('\r');
  });

  it('redraws one bar in place on a terminal and clears it', () => {
    const s = new Sink();
    let t = 0;
    const p = createDemoProgress({ stream: s, tty: true, now: () => (t += 100) });
    p.update({ done: 3, total: 6, annotated: 3 }, 'running');
    p.update({ done: 6, total: 6, annotated: 5 }, 'completed');
    p.clear();
    expect(s.text).toContain('\r\x1b[K  [##########----------]  50% 3/6 spectra · 3 annotated · running');
    expect(s.text).toContain('100% 6/6 spectra');
    expect(s.text.endsWith('\r\x1b[K')).toBe(true);
    expect(s.text).not.toContain('\n');
  });
});

describe('demo stick spectrum', () => {
  it('colours and labels the peaks the best candidate explains, greys the others', () => {
    const svg = stickSpectrumSvg(
      [
        [287.0551, 1000],
        [449.1079, 400],
        [300.1234, 50],
        [581.1501, 80],
      ],
      candidate(),
      581.1501,
      'S1',
    );
    expect(svg.match(/stroke="#2b6cb0"/g)).toHaveLength(2);
    expect(svg.match(/stroke="#b4bcc5"/g)).toHaveLength(1);
    expect(svg.match(/stroke="#6b7f99"/g)).toHaveLength(1); // the surviving precursor ion
    expect(svg).toMatch(/>Y0<\/text>/);
    expect(svg).toMatch(/>Y1<\/text>/);
    expect(svg).not.toMatch(/NaN/);
  });
});
