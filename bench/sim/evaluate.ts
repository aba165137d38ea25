/**
 * Judges engine results against the simulator's ground truth: top-1/top-3 correctness, topology, decoys
 * left unassigned, break-downs, and the commonest failure kinds — as data, so engine tuning can call it
 * from a quick script.
 */
import {
  type Formula,
  formatFormula,
  formulaEquals,
  parseFormula,
  subtractFormula,
} from '../../engine/chem/formula.js';
import type { CandidateResult, SpectrumResult } from '../../engine/report/result.js';
import type { SimTruth } from './truth.js';

/** Options of {@link evaluate}. */
export interface EvaluateOptions {
  /**
   * Names of the aglycones in the engine's library. A truth aglycone missing from it can only be found by its
   * formula: any name (or `unknown`) with the right Y0 formula then counts as correct.
   * @defaultValue undefined (every truth name must be matched)
   */
  libraryNames?: Iterable<string>;
  /** Whether a candidate's topology denotes the truth's. @defaultValue {@link topologyMatches} */
  topologyEquals?: (candidateTopology: string, truth: SimTruth) => boolean;
  /** How many failures to keep per kind as examples. @defaultValue 5 */
  examplesPerKind?: number;
}

/** Counts for one group of glycoside spectra. */
export interface Tally {
  n: number;
  top1: number;
  top3: number;
  /** Top-1 correct and its topology right too. */
  topologyTop1: number;
}

/** Counts for one group of decoys. */
export interface DecoyTally {
  n: number;
  unassigned: number;
  annotated: number;
  error: number;
}

/** All the numbers of one evaluation. */
export interface QualityMetrics {
  spectra: number;
  glycosides: Tally;
  decoys: DecoyTally;
  byIonType: Record<string, Tally>;
  byResidueCount: Record<string, Tally>;
  byAcyl: Record<string, Tally>;
  byAglycone: Record<string, Tally>;
  byLinkage: Record<string, Tally>;
  byCoIsolation: Record<string, Tally>;
  byDecoyKind: Record<string, DecoyTally>;
  statuses: Record<string, number>;
  /** Truths with no result of the same id. */
  missingResults: number;
  /** Library truths whose aglycone name is not in the engine's library (judged by formula). */
  truthNamesOutsideLibrary: number;
}

/** Why one spectrum was not right at rank 1. */
export interface Failure {
  id: string;
  kind: string;
  detail: string;
  truth: string;
  /** Rank of the first correct candidate, when one is further down. */
  correctRank?: number;
  decoy: boolean;
}

/** The evaluation: metrics, every failure, and failure kinds by frequency. */
export interface QualityReport {
  metrics: QualityMetrics;
  failures: Failure[];
  failureKinds: { kind: string; count: number; examples: string[] }[];
}

/** How one candidate compares with the truth. */
export interface CandidateVerdict {
  correct: boolean;
  aglyconeFormula: boolean;
  aglyconeName: boolean;
  residues: boolean;
  acyls: boolean;
  topology: boolean;
}

const tally = (): Tally => ({ n: 0, top1: 0, top3: 0, topologyTop1: 0 });
const decoyTally = (): DecoyTally => ({ n: 0, unassigned: 0, annotated: 0, error: 0 });

/** Name comparison ignoring case, spaces, hyphens and the "(epi)" stereo prefix (catechin ≡ (epi)catechin). */
export function normaliseName(name: string): string {
  return name
    .toLowerCase()
    .replace(/\(epi\)|^epi(?=catechin|gallocatechin)/g, '')
    .replace(/[\s_\-′']/g, '');
}

function parseOrUndefined(text: string): Formula | undefined {
  try {
    return parseFormula(text);
  } catch {
    return undefined;
  }
}

/** Sorted multiset keys of a candidate's residues (`Hex/O`) and acyl groups. */
export function candidateMultisets(c: CandidateResult): { residues: string[]; acyls: string[] } {
  const residues = c.substituents
    .filter((s) => s.linkage !== 'ester')
    .map((s) => `${s.residue}/${s.linkage}`)
    .sort();
  const acyls = c.substituents
    .filter((s) => s.linkage === 'ester')
    .map((s) => s.residue)
    .sort();
  return { residues, acyls };
}

function truthMultisets(t: SimTruth): { residues: string[]; acyls: string[] } {
  return { residues: t.residues.map((r) => `${r.residue}/${r.linkage}`).sort(), acyls: [...t.acyls].sort() };
}

/** Parses the bracket stacking notation (`[Hex[dHex]][C-Hex]`) into a canonical string; undefined if it is not one. */
export function canonicalBrackets(text: string): string | undefined {
  const s = text.replace(/\s+/g, '');
  let i = 0;
  const node = (): string | undefined => {
    if (s[i] !== '[') return undefined;
    i++;
    let name = '';
    while (i < s.length && s[i] !== '[' && s[i] !== ']') name += s[i++];
    const kids: string[] = [];
    while (s[i] === '[') {
      const k = node();
      if (k === undefined) return undefined;
      kids.push(k);
    }
    if (s[i] !== ']') return undefined;
    i++;
    return `[${name}${kids.sort().join('')}]`;
  };
  const roots: string[] = [];
  // Anything before the first bracket (an aglycone name) is ignored.
  i = s.indexOf('[');
  if (i < 0) return s.length === 0 ? '' : undefined;
  while (i < s.length) {
    const r = node();
    if (r === undefined) return undefined;
    roots.push(r);
  }
  return roots.sort().join('');
}

/**
 * The truth's topology in the bracket stacking notation: each unit in brackets with its children (sugars and
 * acyl groups) inside, C-linked sugars as `C-Hex`, sorted. Built from the simulator notation.
 */
export function truthBrackets(t: SimTruth): string {
  return t.sites
    .map((site) => simTreeToBrackets(site.tree))
    .sort()
    .join('');
}

/** Simulator notation of one tree (`Hex[malonyl](dHex,Pen)`) → brackets (`[Hex[Pen][dHex][malonyl]]`). */
function simTreeToBrackets(tree: string): string {
  let i = 0;
  const node = (): string => {
    let name = '';
    while (i < tree.length && !'[](),'.includes(tree[i]!)) name += tree[i++];
    const kids: string[] = [];
    if (tree[i] === '[') {
      i++;
      let acyl = '';
      for (;;) {
        const ch = tree[i++]!;
        if (ch === ',' || ch === ']') {
          kids.push(`[${acyl}]`);
          acyl = '';
          if (ch === ']') break;
        } else acyl += ch;
      }
    }
    if (tree[i] === '(') {
      i++;
      for (;;) {
        kids.push(node());
        const ch = tree[i++];
        if (ch === ')' || ch === undefined) break;
      }
    }
    return `[${name}${kids.sort().join('')}]`;
  };
  return canonicalBrackets(node()) ?? '';
}

/** Default topology comparison: bracket notation compared canonically, else the simulator notation verbatim. */
export function topologyMatches(candidateTopology: string, truth: SimTruth): boolean {
  const c = canonicalBrackets(candidateTopology);
  if (c !== undefined) return c === canonicalBrackets(truthBrackets(truth));
  return candidateTopology.replace(/\s+/g, '') === truth.topology.replace(/\s+/g, '');
}

/** Compares one candidate with a glycoside truth (see the benchmark's definition of "correct"). */
export function judgeCandidate(
  c: CandidateResult,
  t: SimTruth,
  library: ReadonlySet<string> | undefined,
  topologyEquals: (candidateTopology: string, truth: SimTruth) => boolean = topologyMatches,
): CandidateVerdict {
  const ag = t.aglycone!;
  const cf = parseOrUndefined(c.aglycone.formula);
  const tf = parseFormula(ag.ionFormula);
  const aglyconeFormula = cf !== undefined && formulaEquals(cf, tf);
  const names = [c.aglycone.name, ...c.aglycone.alternatives].map(normaliseName);
  let aglyconeName: boolean;
  if (ag.name === 'unknown') aglyconeName = names[0] === 'unknown';
  else if (library && !library.has(normaliseName(ag.name))) aglyconeName = true;
  else aglyconeName = names.includes(normaliseName(ag.name));
  const cm = candidateMultisets(c);
  const tm = truthMultisets(t);
  const residues = cm.residues.join(',') === tm.residues.join(',');
  const acyls = cm.acyls.join(',') === tm.acyls.join(',');
  const topology = topologyEquals(c.topology, t);
  return {
    correct: aglyconeFormula && aglyconeName && residues && acyls,
    aglyconeFormula,
    aglyconeName,
    residues,
    acyls,
    topology,
  };
}

function multisetDiff(expected: string[], got: string[]): string {
  const left = [...expected];
  const extra: string[] = [];
  for (const g of got) {
    const i = left.indexOf(g);
    if (i >= 0) left.splice(i, 1);
    else extra.push(g);
  }
  return [...left.map((x) => `−${x}`), ...extra.map((x) => `+${x}`)].join(' ');
}

function failureOfTop(
  c: CandidateResult,
  t: SimTruth,
  v: CandidateVerdict,
): { kind: string; detail: string } {
  const ag = t.aglycone!;
  if (!v.aglyconeFormula) {
    const cf = parseOrUndefined(c.aglycone.formula);
    if (!cf) return { kind: 'aglycone formula unreadable', detail: c.aglycone.formula };
    const neutral = parseFormula(ag.neutralFormula);
    if (formulaEquals({ counts: cf.counts, charge: 0 }, { counts: neutral.counts, charge: 0 })) {
      return {
        kind: 'aglycone formula given as the neutral molecule',
        detail: `${c.aglycone.formula} vs ${ag.ionFormula}`,
      };
    }
    const delta = subtractFormula(cf, parseFormula(ag.ionFormula));
    const text = formatDelta(delta);
    return {
      kind: `aglycone formula off by ${text}`,
      detail: `${c.aglycone.formula} (${c.aglycone.name}) vs ${ag.ionFormula} (${ag.name})`,
    };
  }
  if (!v.aglyconeName) {
    if (ag.name === 'unknown')
      return {
        kind: 'unknown aglycone given a library name',
        detail: `${c.aglycone.name} for ${ag.ionFormula}`,
      };
    if (normaliseName(c.aglycone.name) === 'unknown')
      return { kind: 'library aglycone reported as unknown', detail: `${ag.name} ${ag.ionFormula}` };
    return {
      kind: 'aglycone name not among the tied names',
      detail: `${[c.aglycone.name, ...c.aglycone.alternatives].join('/')} vs ${ag.name}`,
    };
  }
  const cm = candidateMultisets(c);
  const tm = truthMultisets(t);
  if (!v.residues)
    return {
      kind: `residues ${multisetDiff(tm.residues, cm.residues)}`,
      detail: `${cm.residues.join(',')} vs ${tm.residues.join(',')}`,
    };
  return {
    kind: `acyls ${multisetDiff(tm.acyls, cm.acyls)}`,
    detail: `${cm.acyls.join(',')} vs ${tm.acyls.join(',')}`,
  };
}

function formatDelta(d: Formula): string {
  const pos = { counts: d.counts.map((n) => Math.max(0, n)), charge: 0 };
  const neg = { counts: d.counts.map((n) => Math.max(0, -n)), charge: 0 };
  const p = pos.counts.some((n) => n > 0) ? `+${formatFormula(pos)}` : '';
  const n = neg.counts.some((x) => x > 0) ? `−${formatFormula(neg)}` : '';
  const z = d.charge !== 0 ? ` (charge ${d.charge > 0 ? '+' : ''}${d.charge})` : '';
  return `${p}${n}${z}` || 'charge only';
}

/** Evaluates results against truths (matched by id). */
export function evaluate(
  results: readonly SpectrumResult[],
  truths: readonly SimTruth[],
  options: EvaluateOptions = {},
): QualityReport {
  const byId = new Map(results.map((r) => [r.id, r]));
  const library = options.libraryNames ? new Set([...options.libraryNames].map(normaliseName)) : undefined;
  const topologyEquals = options.topologyEquals ?? topologyMatches;
  const m: QualityMetrics = {
    spectra: truths.length,
    glycosides: tally(),
    decoys: decoyTally(),
    byIonType: {},
    byResidueCount: {},
    byAcyl: {},
    byAglycone: {},
    byLinkage: {},
    byCoIsolation: {},
    byDecoyKind: {},
    statuses: {},
    missingResults: 0,
    truthNamesOutsideLibrary: 0,
  };
  const failures: Failure[] = [];
  const bump = (rec: Record<string, Tally>, k: string, top1: boolean, top3: boolean, topo: boolean): void => {
    const x = rec[k] ?? tally();
    rec[k] = x;
    x.n++;
    if (top1) x.top1++;
    if (top3) x.top3++;
    if (topo) x.topologyTop1++;
  };
  for (const t of truths) {
    const r = byId.get(t.id);
    const status = r?.status ?? 'missing';
    m.statuses[status] = (m.statuses[status] ?? 0) + 1;
    if (!r) m.missingResults++;
    if (t.decoy) {
      const dk = t.decoyKind ?? 'other';
      const d = m.byDecoyKind[dk] ?? decoyTally();
      m.byDecoyKind[dk] = d;
      for (const x of [m.decoys, d]) {
        x.n++;
        if (status === 'unassigned') x.unassigned++;
        else if (status === 'annotated') x.annotated++;
        else x.error++;
      }
      if (status !== 'unassigned') {
        const top = r?.candidates[0];
        failures.push({
          id: t.id,
          decoy: true,
          kind:
            status === 'annotated'
              ? `decoy annotated (${t.decoyKind})`
              : `decoy ${status}${r?.reason ? `: ${r.reason.code}` : ''}`,
          detail: top ? `${top.aglycone.name} ${top.topology} ${top.formula}` : (r?.reason?.message ?? ''),
          truth: t.description,
        });
      }
      continue;
    }
    if (t.aglycone?.library && library && !library.has(normaliseName(t.aglycone.name)))
      m.truthNamesOutsideLibrary++;
    const cands = r?.status === 'annotated' ? [...r.candidates].sort((a, b) => a.rank - b.rank) : [];
    const verdicts = cands.slice(0, 3).map((c) => judgeCandidate(c, t, library, topologyEquals));
    const top1 = verdicts[0]?.correct ?? false;
    const top3 = verdicts.some((v) => v.correct);
    const topo = top1 && verdicts[0]!.topology;
    bump({ all: m.glycosides }, 'all', top1, top3, topo);
    bump(m.byIonType, t.ionType, top1, top3, topo);
    bump(m.byResidueCount, String(t.residues.length), top1, top3, topo);
    bump(m.byAcyl, t.acyls.length > 0 ? 'acylated' : 'no acyl', top1, top3, topo);
    bump(m.byAglycone, t.aglycone?.library ? 'library' : 'unknown', top1, top3, topo);
    bump(m.byLinkage, t.cGlycoside ? 'C-glycoside' : 'O-glycoside', top1, top3, topo);
    bump(m.byCoIsolation, t.coIsolated ? 'co-isolated' : 'clean isolation', top1, top3, topo);
    if (top1) continue;
    const correctRank = verdicts.findIndex((v) => v.correct);
    let kind: string;
    let detail: string;
    if (!r) {
      kind = 'no result';
      detail = '';
    } else if (r.status !== 'annotated' || cands.length === 0) {
      kind = `${r.status === 'annotated' ? 'no candidates' : r.status}${r.reason ? `: ${r.reason.code}` : ''}`;
      detail = r.reason?.message ?? '';
    } else {
      ({ kind, detail } = failureOfTop(cands[0]!, t, verdicts[0]!));
    }
    const failure: Failure = { id: t.id, decoy: false, kind, detail, truth: t.description };
    if (correctRank > 0) failure.correctRank = correctRank + 1;
    failures.push(failure);
  }
  const kinds = new Map<string, { kind: string; count: number; examples: string[] }>();
  const per = options.examplesPerKind ?? 5;
  for (const fl of failures) {
    const k = kinds.get(fl.kind) ?? { kind: fl.kind, count: 0, examples: [] };
    k.count++;
    if (k.examples.length < per) k.examples.push(fl.id);
    kinds.set(fl.kind, k);
  }
  return {
    metrics: m,
    failures,
    failureKinds: [...kinds.values()].sort((a, b) => b.count - a.count || a.kind.localeCompare(b.kind)),
  };
}

const pct = (k: number, n: number): string => (n === 0 ? '–' : `${((100 * k) / n).toFixed(1)} %`);

function tallyTable(title: string, rec: Record<string, Tally>): string {
  const rows = Object.entries(rec)
    .sort((a, b) => a[0].localeCompare(b[0], 'en', { numeric: true }))
    .map(
      ([k, x]) =>
        `| ${k} | ${x.n} | ${pct(x.top1, x.n)} | ${pct(x.top3, x.n)} | ${pct(x.topologyTop1, x.n)} |`,
    );
  return [
    `| ${title} | spectra | top-1 | top-3 | top-1 with topology |`,
    '|---|---:|---:|---:|---:|',
    ...rows,
  ].join('\n');
}

/** The report as Markdown tables (used by the quality benchmark). */
export function formatQualityMarkdown(report: QualityReport, failureKinds = 10): string {
  const m = report.metrics;
  const g = m.glycosides;
  const d = m.decoys;
  const out: string[] = [];
  out.push('| measure | value | target |', '|---|---:|---:|');
  out.push(`| top-1 correct (glycosides) | ${pct(g.top1, g.n)} (${g.top1}/${g.n}) | ≥ 95 % |`);
  out.push(`| top-3 correct (glycosides) | ${pct(g.top3, g.n)} (${g.top3}/${g.n}) | ≥ 99 % |`);
  out.push(`| top-1 correct with topology | ${pct(g.topologyTop1, g.n)} (${g.topologyTop1}/${g.n}) | – |`);
  out.push(`| decoys left unassigned | ${pct(d.unassigned, d.n)} (${d.unassigned}/${d.n}) | ≥ 95 % |`);
  out.push(
    `| result statuses | ${Object.entries(m.statuses)
      .map(([k, v]) => `${k} ${v}`)
      .join(', ')} | – |`,
  );
  if (m.truthNamesOutsideLibrary > 0) {
    out.push(
      `| library truths whose name the rule set lacks (judged by formula) | ${m.truthNamesOutsideLibrary} | – |`,
    );
  }
  out.push('', tallyTable('ion type', m.byIonType));
  out.push('', tallyTable('residues', m.byResidueCount));
  out.push('', tallyTable('acyl', m.byAcyl));
  out.push('', tallyTable('aglycone', m.byAglycone));
  out.push('', tallyTable('linkage', m.byLinkage));
  out.push('', tallyTable('isolation', m.byCoIsolation));
  out.push('', '| decoy kind | spectra | unassigned | annotated | error |', '|---|---:|---:|---:|---:|');
  for (const [k, x] of Object.entries(m.byDecoyKind).sort()) {
    out.push(`| ${k} | ${x.n} | ${pct(x.unassigned, x.n)} | ${x.annotated} | ${x.error} |`);
  }
  out.push(
    '',
    `Commonest failure kinds (of ${report.failures.length} failures):`,
    '',
    '| # | kind | count | examples |',
    '|---:|---|---:|---|',
  );
  report.failureKinds.slice(0, failureKinds).forEach((k, i) => {
    out.push(`| ${i + 1} | ${k.kind.replace(/\|/g, '\\|')} | ${k.count} | ${k.examples.join(', ')} |`);
  });
  return out.join('\n');
}
