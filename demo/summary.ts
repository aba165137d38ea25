import { judgeCandidate, normaliseName, type SimTruth } from '../bench/sim/index.js';
import type { CandidateResult, SpectrumResult } from '../engine/report/result.js';

/** How a spectrum's best answer compares with the simulator's truth (simulated data only). */
export type TruthVerdict = 'agrees' | 'differs' | 'no-truth';

/** One line of the summary: a spectrum and its best-ranked candidate. */
export interface SummaryRow {
  index: number;
  id: string;
  status: SpectrumResult['status'];
  /** Why unassigned or error. */
  reason?: { code: string; message: string };
  /** Aglycone of the best candidate (`unknown` for one that is in no library). */
  aglycone?: string;
  aglyconeFormula?: string;
  /** Other library aglycones with the same ion formula: the data cannot tell them apart. */
  alternatives: string[];
  /** The best candidate's topology in the stacking notation (aglycone first). */
  topology?: string;
  ionType?: string;
  explainedIntensity?: number;
  confidenceLevel?: number;
  /** The next-ranked candidate scores the same as the best one. */
  tied: boolean;
  truth: TruthVerdict;
  /** What the truth says, for the report. */
  truthText?: string;
}

/** Counts of the batch and of the self-check against the simulated truth. */
export interface SummaryTally {
  spectra: number;
  annotated: number;
  unassigned: number;
  errors: number;
  /** Glycoside spectra of the truth file, and how many best candidates agree (aglycone incl. ties, sugars, acyls). */
  glycosides: number;
  glycosidesAgree: number;
  /** Of those that agree, how many also have the truth's stacking. */
  stackingAgree: number;
  /** Spectra that are not glycosides, and how many were left unassigned. */
  decoys: number;
  decoysUnassigned: number;
  /** Results without a truth entry (none for the demo data). */
  withoutTruth: number;
}

/** The best candidate's topology without its aglycone part: `cyanidin[Hex[Pen]]` → `[Hex[Pen]]`. */
export function stackingPart(topology: string): string {
  const at = topology.indexOf('[');
  return at > 0 ? topology.slice(at) : topology;
}

function truthText(t: SimTruth): string {
  if (t.decoy) return `not a glycoside (${t.decoyKind ?? 'decoy'}): expected unassigned`;
  const ag = t.aglycone;
  const name = ag ? (ag.name === 'unknown' ? `unknown aglycone ${ag.ionFormula}` : ag.name) : '?';
  return `${name} + ${t.topology} as ${t.ionType}`;
}

/**
 * Summarises results (in their order) and, when truths are given, judges each best candidate with the quality
 * benchmark's own rule (bench/sim `judgeCandidate`): right aglycone (or among the same-formula ties), right
 * residues and acyl groups; decoys must stay unassigned.
 */
export function summarise(
  results: readonly SpectrumResult[],
  truths: readonly SimTruth[] | undefined,
  libraryNames: Iterable<string>,
): { rows: SummaryRow[]; tally: SummaryTally } {
  const byId = new Map((truths ?? []).map((t) => [t.id, t]));
  const library = new Set([...libraryNames].map(normaliseName));
  const tally: SummaryTally = {
    spectra: results.length,
    annotated: 0,
    unassigned: 0,
    errors: 0,
    glycosides: 0,
    glycosidesAgree: 0,
    stackingAgree: 0,
    decoys: 0,
    decoysUnassigned: 0,
    withoutTruth: 0,
  };
  const rows = results.map((r, i): SummaryRow => {
    if (r.status === 'annotated') tally.annotated++;
    else if (r.status === 'unassigned') tally.unassigned++;
    else tally.errors++;
    const best: CandidateResult | undefined = r.status === 'annotated' ? r.candidates[0] : undefined;
    const row: SummaryRow = {
      index: r.index ?? i,
      id: r.id,
      status: r.status,
      ...(r.reason ? { reason: r.reason } : {}),
      alternatives: best?.aglycone.alternatives ?? [],
      tied: r.candidates[1]?.tiedWithPrevious === true && best !== undefined,
      truth: 'no-truth',
    };
    if (best) {
      row.aglycone = best.aglycone.name;
      row.aglyconeFormula = best.aglycone.formula;
      row.topology = best.topology;
      row.ionType = best.ionType ?? r.precursor?.ionType ?? undefined;
      row.explainedIntensity = best.explainedIntensity;
      row.confidenceLevel = best.confidenceLevel;
    }
    const t = byId.get(r.id);
    if (!t) {
      if (truths) tally.withoutTruth++;
      return row;
    }
    row.truthText = truthText(t);
    if (t.decoy) {
      tally.decoys++;
      const ok = r.status === 'unassigned';
      if (ok) tally.decoysUnassigned++;
      row.truth = ok ? 'agrees' : 'differs';
      return row;
    }
    tally.glycosides++;
    const v = best && t.aglycone ? judgeCandidate(best, t, library) : undefined;
    if (v?.correct) {
      tally.glycosidesAgree++;
      if (v.topology) tally.stackingAgree++;
    }
    row.truth = v?.correct ? 'agrees' : 'differs';
    return row;
  });
  return { rows, tally };
}

const pct = (x: number | undefined) => (x === undefined ? '' : `${(x * 100).toFixed(1)}%`);

/** The best-candidate cell: aglycone (+N same-formula alternatives) and the stacking of its residues. */
export function bestCell(row: SummaryRow): string {
  if (row.status !== 'annotated' || !row.topology) return `— ${row.reason?.code ?? row.status}`;
  const name =
    row.aglycone === 'unknown' ? `unknown ${row.aglyconeFormula ?? ''}`.trim() : (row.aglycone ?? '?');
  const alt = row.alternatives.length > 0 ? ` (+${row.alternatives.length})` : '';
  return `${name}${alt} ${stackingPart(row.topology)}`;
}

function clip(s: string, width: number): string {
  return s.length > width ? `${s.slice(0, width - 1)}…` : s;
}

/** The summary as a plain-text table for a terminal (one line per spectrum, in input order). */
export function formatSummaryTable(rows: readonly SummaryRow[], withTruth: boolean): string {
  const header = ['#', 'spectrum', 'status', 'best candidate', 'ion', 'explained', 'level', 'tie'];
  if (withTruth) header.push('sim. truth');
  const cells = rows.map((r) => {
    const c = [
      String(r.index + 1),
      r.id,
      r.status,
      clip(bestCell(r), 44),
      r.ionType ?? '',
      pct(r.explainedIntensity),
      r.confidenceLevel !== undefined ? String(r.confidenceLevel) : '',
      r.tied ? '=' : '',
    ];
    if (withTruth) c.push(r.truth === 'agrees' ? 'agrees' : r.truth === 'differs' ? 'DIFFERS' : '');
    return c;
  });
  const right = new Set([0, 5, 6]);
  const widths = header.map((h, k) => Math.max(h.length, ...cells.map((c) => c[k]!.length)));
  const line = (c: string[]) =>
    c
      .map((x, k) => (right.has(k) ? x.padStart(widths[k]!) : x.padEnd(widths[k]!)))
      .join('  ')
      .trimEnd();
  return [line(header), line(widths.map((w) => '-'.repeat(w))), ...cells.map(line)].join('\n');
}

/** Lines under the table: what the markers mean, the tally and the self-check. */
export function formatTally(t: SummaryTally, withTruth: boolean): string[] {
  const lines = [
    '(+N): N other library aglycones have the same ion formula; MS/MS cannot tell them apart (all are in the results).',
    "tie '=': the next-ranked candidate scores the same (e.g. isomeric compositions); other stackings of a candidate's residues are listed with it in the results files.",
    'level: confidence on the Schymanski et al. 2014 scale (1 best; level 1 needs a reference standard).',
    '',
    `${t.spectra} spectra: ${t.annotated} annotated, ${t.unassigned} unassigned, ${t.errors} error${t.errors === 1 ? '' : 's'}.`,
  ];
  if (withTruth) {
    lines.push(
      `Self-check on SIMULATED data (not a validation of Peel): the best candidate agrees with the simulator's truth ` +
        `for ${t.glycosidesAgree} of ${t.glycosides} glycoside spectra (aglycone or one of its same-formula ties, ` +
        `residues, acyl groups; stacking too for ${t.stackingAgree}); ${t.decoysUnassigned} of ${t.decoys} ` +
        'non-glycoside spectra were left unassigned, as they should be.',
    );
    if (t.withoutTruth > 0) lines.push(`${t.withoutTruth} result(s) have no truth entry.`);
  }
  return lines;
}
