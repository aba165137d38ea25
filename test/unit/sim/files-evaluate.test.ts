import { describe, expect, it } from 'vitest';
import type { CandidateResult, SpectrumResult } from '../../../engine/report/result.js';
import { readJsonSpectra } from '../../../formats/json-input.js';
import { readMgf } from '../../../formats/mgf.js';
import {
  canonicalBrackets,
  evaluate,
  formatQualityMarkdown,
  normaliseName,
  truthBrackets,
} from '../../../bench/sim/evaluate.js';
import { toJsonDocument, toMgf } from '../../../bench/sim/files.js';
import { generateSet } from '../../../bench/sim/generate.js';
import { buildDemoSet } from '../../../bench/sim/scenario.js';
import type { SimTruth } from '../../../bench/sim/truth.js';

const set = generateSet({ count: 40, seed: 3 });

describe('simulated set files', () => {
  it('MGF says the data are simulated and reads back with Peel’s MGF reader', async () => {
    const text = toMgf(
      set.map((x) => x.spectrum),
      { seed: 3 },
    );
    expect(text.split('\n')[0]).toMatch(/^# SIMULATED DATA/);
    const items = [];
    for await (const it of readMgf(text)) items.push(it);
    expect(items).toHaveLength(40);
    items.forEach((it, i) => {
      expect(it.kind).toBe('spectrum');
      if (it.kind !== 'spectrum') return;
      const want = set[i]!.spectrum;
      expect(it.spectrum.id).toBe(want.id);
      expect(it.spectrum.precursor.charge).toBe(want.precursor.charge);
      expect(it.spectrum.precursor.mz).toBeCloseTo(want.precursor.mz, 5);
      expect(it.spectrum.peaks).toHaveLength(want.peaks.length);
      expect(String(it.spectrum.metadata?.SIMULATED ?? it.spectrum.metadata?.simulated)).toBe('true');
    });
  });

  it('JSON document reads back with Peel’s JSON reader', async () => {
    const text = toJsonDocument(
      set.map((x) => x.spectrum),
      { seed: 3 },
    );
    const items = [];
    for await (const it of readJsonSpectra(text)) items.push(it);
    expect(items.filter((x) => x.kind === 'spectrum')).toHaveLength(40);
  });
});

function candidate(t: SimTruth, over: Partial<CandidateResult> = {}): CandidateResult {
  return {
    rank: 1,
    aglycone: { name: t.aglycone!.name, formula: t.aglycone!.ionFormula, alternatives: [] },
    substituents: [
      ...t.residues.map((r) => ({ residue: r.residue, linkage: r.linkage })),
      ...t.acyls.map((a) => ({ residue: a, linkage: 'ester' as const })),
    ],
    topology: truthBrackets(t),
    formula: t.precursorFormula!,
    ppm: 0,
    explainedIntensity: 0.9,
    score: 1,
    confidenceLevel: 3,
    matchedPeaks: [],
    ...over,
  };
}

describe('evaluate', () => {
  const truths = set.map((x) => x.truth);
  const perfect: SpectrumResult[] = truths.map((t) =>
    t.decoy
      ? { id: t.id, status: 'unassigned', reason: { code: 'x', message: 'x' }, candidates: [], cautions: [] }
      : { id: t.id, status: 'annotated', candidates: [candidate(t)], cautions: [] },
  );

  it('scores perfect answers 100 % and decoys left unassigned', () => {
    const r = evaluate(perfect, truths);
    expect(r.metrics.glycosides.top1).toBe(r.metrics.glycosides.n);
    expect(r.metrics.glycosides.topologyTop1).toBe(r.metrics.glycosides.n);
    expect(r.metrics.decoys.unassigned).toBe(r.metrics.decoys.n);
    expect(r.failures).toHaveLength(0);
    expect(formatQualityMarkdown(r)).toContain('100.0 %');
  });

  it('names the failure kinds: wrong residue, wrong aglycone formula, missing result, annotated decoy', () => {
    const g = truths.filter((t) => !t.decoy);
    const d = truths.find((t) => t.decoy)!;
    const results: SpectrumResult[] = [
      {
        id: g[0]!.id,
        status: 'annotated',
        candidates: [candidate(g[0]!, { substituents: [{ residue: 'Pen', linkage: 'O' }] })],
        cautions: [],
      },
      {
        id: g[1]!.id,
        status: 'annotated',
        candidates: [candidate(g[1]!, { aglycone: { name: 'x', formula: 'C99H2O', alternatives: [] } })],
        cautions: [],
      },
      { id: d.id, status: 'annotated', candidates: [candidate(g[2]!)], cautions: [] },
      // g[2] has no result at all.
      {
        id: g[3]!.id,
        status: 'annotated',
        candidates: [
          candidate(g[3]!, { rank: 1, acylsWrong: true } as unknown as Partial<CandidateResult>),
          candidate(g[3]!, { rank: 2 }),
        ].map((c, i) =>
          i === 0
            ? { ...c, substituents: [...c.substituents, { residue: 'acetyl', linkage: 'ester' as const }] }
            : c,
        ),
        cautions: [],
      },
    ];
    const r = evaluate(results, [g[0]!, g[1]!, g[2]!, g[3]!, d]);
    const kinds = r.failures.map((x) => x.kind);
    expect(kinds.some((k) => k.startsWith('residues '))).toBe(true);
    expect(kinds.some((k) => k.startsWith('aglycone formula off by'))).toBe(true);
    expect(kinds).toContain('no result');
    expect(kinds.some((k) => k.startsWith('decoy annotated'))).toBe(true);
    expect(kinds).toContain('acyls +acetyl');
    expect(r.failures.find((x) => x.id === g[3]!.id)?.correctRank).toBe(2);
    expect(r.metrics.glycosides.top3).toBe(1);
  });

  it('accepts a tied name among the alternatives and judges names missing from the library by formula', () => {
    const t = truths.find((x) => !x.decoy && x.aglycone!.library)!;
    const tie: SpectrumResult = {
      id: t.id,
      status: 'annotated',
      candidates: [
        candidate(t, {
          aglycone: { name: 'other', formula: t.aglycone!.ionFormula, alternatives: [t.aglycone!.name] },
        }),
      ],
      cautions: [],
    };
    expect(evaluate([tie], [t]).metrics.glycosides.top1).toBe(1);
    const wrongName: SpectrumResult = {
      ...tie,
      candidates: [
        candidate(t, { aglycone: { name: 'other', formula: t.aglycone!.ionFormula, alternatives: [] } }),
      ],
    };
    expect(evaluate([wrongName], [t]).metrics.glycosides.top1).toBe(0);
    expect(evaluate([wrongName], [t], { libraryNames: ['other'] }).metrics.glycosides.top1).toBe(1);
  });

  it('treats stereo-prefixed library names as the same aglycone', () => {
    expect(normaliseName('(epi)catechin')).toBe(normaliseName('epicatechin'));
    expect(normaliseName('(epi)catechin')).toBe(normaliseName('catechin'));
    expect(normaliseName('Biochanin A')).toBe(normaliseName('biochanin-a'));
    expect(normaliseName('quercetin')).not.toBe(normaliseName('kaempferol'));
  });

  it('converts the simulator topology to bracket notation canonically', () => {
    const t = {
      sites: [
        { position: '3', linkage: 'O', tree: 'Hex[p-coumaroyl](dHex)' },
        { position: '5', linkage: 'O', tree: 'Hex' },
      ],
    } as SimTruth;
    expect(truthBrackets(t)).toBe('[Hex[dHex][p-coumaroyl]][Hex]');
    expect(canonicalBrackets('[Hex][Hex[p-coumaroyl][dHex]]')).toBe('[Hex[dHex][p-coumaroyl]][Hex]');
    const c = { sites: [{ position: '8', linkage: 'C', tree: 'C-Hex(Pen)' }] } as SimTruth;
    expect(truthBrackets(c)).toBe('[C-Hex[Pen]]');
  });
});

describe('demo batch', () => {
  it('is 40–80 simulated spectra in both polarities, reproducible, with unique ids', () => {
    const a = buildDemoSet();
    const b = buildDemoSet();
    expect(JSON.stringify(a)).toBe(JSON.stringify(b));
    expect(a.length).toBeGreaterThanOrEqual(40);
    expect(a.length).toBeLessThanOrEqual(80);
    expect(new Set(a.map((x) => x.spectrum.id)).size).toBe(a.length);
    expect(a.some((x) => x.spectrum.polarity === 'positive')).toBe(true);
    expect(a.some((x) => x.spectrum.polarity === 'negative')).toBe(true);
    expect(a.every((x) => x.spectrum.metadata?.simulated === true)).toBe(true);
  });
});
