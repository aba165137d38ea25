import type { CandidateResult, RuleSetRef, SpectrumResult } from '../engine/report/result.js';
import { bestCell, type SummaryRow, type SummaryTally, stackingPart } from './summary.js';

/** What the HTML report is made of. */
export interface ReportInput {
  /** Lines describing the (fictional) scenario. */
  scenario: readonly string[];
  /** How the results were obtained, one sentence. */
  howScored: string;
  ruleset: RuleSetRef;
  peelVersion: string;
  /** When the report was made (ISO 8601). */
  generatedAt: string;
  results: readonly SpectrumResult[];
  rows: readonly SummaryRow[];
  tally: SummaryTally;
  /** Whether the rows carry a verdict against a simulated truth. */
  withTruth: boolean;
  /** The input peaks of each spectrum by id, for the stick spectra. */
  peaks: ReadonlyMap<string, ReadonlyArray<readonly [number, number]>>;
  /** The input precursor m/z by id. */
  precursors?: ReadonlyMap<string, number>;
  /** The disclaimer of the results document. */
  disclaimer?: string;
}

const esc = (s: string | number | undefined | null): string =>
  String(s ?? '')
    .replace(/&/g, '&amp;')
    .replace(/</g, '&lt;')
    .replace(/>/g, '&gt;')
    .replace(/"/g, '&quot;');

const pct = (x: number | undefined) => (x === undefined ? '' : `${(x * 100).toFixed(1)} %`);
const num = (x: number, d: number) => x.toFixed(d);
const anchor = (row: { index: number }) => `s${row.index + 1}`;

// A plain palette of our own: ink, a muted blue for explained peaks, grey for the rest, amber for cautions.
const CSS = `
:root { --ink: #1f2328; --muted: #59636e; --line: #d0d7de; --matched: #2b6cb0; --other: #b4bcc5;
  --warn-bg: #fff5d6; --warn-line: #c79a00; --ok: #2f7d4f; --bad: #b3261e; }
* { box-sizing: border-box; }
body { font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; color: var(--ink);
  margin: 0 auto; max-width: 1080px; padding: 24px 28px 60px; background: #fff; }
h1 { font-size: 22px; margin: 0 0 4px; }
h2 { font-size: 17px; margin: 32px 0 8px; border-bottom: 1px solid var(--line); padding-bottom: 4px; }
h3 { font-size: 15px; margin: 0 0 6px; font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; }
p { margin: 6px 0; }
.sub { color: var(--muted); margin: 0 0 14px; }
.caution { background: var(--warn-bg); border: 2px solid var(--warn-line); border-radius: 6px; padding: 10px 14px;
  margin: 14px 0 18px; }
.caution strong.big { display: block; font-size: 16px; letter-spacing: .02em; margin-bottom: 4px; }
.scenario { color: var(--ink); }
.meta { color: var(--muted); font-size: 13px; }
table { border-collapse: collapse; width: 100%; font-size: 13px; }
th, td { text-align: left; padding: 3px 8px; border-bottom: 1px solid var(--line); vertical-align: top; }
th { background: #f3f5f7; font-weight: 600; white-space: nowrap; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.id, .mono { font-family: ui-monospace, SFMono-Regular, Menlo, Consolas, monospace; font-size: 12px; }
tr.unassigned td, tr.error td { color: var(--muted); }
.agrees { color: var(--ok); } .differs { color: var(--bad); font-weight: 600; }
.tally { margin: 10px 0; }
.legend { color: var(--muted); font-size: 12px; margin-top: 6px; }
.spectrum { border: 1px solid var(--line); border-radius: 6px; padding: 12px 14px; margin: 14px 0; break-inside: avoid; }
.spectrum .facts { color: var(--muted); font-size: 13px; margin-bottom: 6px; }
.spectrum ul { margin: 4px 0 8px 18px; padding: 0; color: var(--muted); font-size: 12.5px; }
.block-title { margin: 12px 0 4px; }
table.narrow { width: auto; min-width: 55%; }
svg { display: block; width: 100%; height: auto; margin: 4px 0; }
svg text { font-family: system-ui, sans-serif; }
.key { font-size: 12px; color: var(--muted); }
.swatch { display: inline-block; width: 10px; height: 10px; vertical-align: -1px; margin: 0 3px 0 8px; }
footer { margin-top: 36px; color: var(--muted); font-size: 12px; }
`;

/** Matches input peaks to the best candidate's matched peaks (cleaned m/z may be merged or folded). */
function labelOf(mz: number, matched: readonly CandidateResult['matchedPeaks'][number][]) {
  let best: (typeof matched)[number] | undefined;
  let bestD = Number.POSITIVE_INFINITY;
  for (const m of matched) {
    const d = Math.abs(m.mz - mz);
    if (d < bestD) {
      bestD = d;
      best = m;
    }
  }
  return best && bestD <= Math.max(0.003, mz * 20e-6) ? best : undefined;
}

function niceStep(span: number): number {
  const raw = span / 8;
  const p = 10 ** Math.floor(Math.log10(raw));
  for (const m of [1, 2, 2.5, 5, 10]) if (m * p >= raw) return m * p;
  return 10 * p;
}

/** An SVG stick spectrum: peaks the best candidate explains in colour and labelled, the others grey. */
export function stickSpectrumSvg(
  peaks: ReadonlyArray<readonly [number, number]>,
  candidate: CandidateResult | undefined,
  precursorMz: number | undefined,
  title: string,
): string {
  const W = 960;
  const H = 260;
  const L = 46;
  const R = 14;
  const T = 30;
  const B = 34;
  if (peaks.length === 0) return '<p class="meta">No peaks.</p>';
  const maxI = Math.max(...peaks.map((p) => p[1])) || 1;
  const mzs = peaks.map((p) => p[0]);
  const hi0 = Math.max(...mzs, precursorMz ?? 0);
  const lo0 = Math.min(...mzs);
  const step = niceStep(Math.max(hi0 - lo0, 50));
  const lo = Math.max(0, Math.floor((lo0 - step * 0.3) / step) * step);
  const hi = Math.ceil((hi0 + step * 0.3) / step) * step;
  const x = (mz: number) => L + ((mz - lo) / (hi - lo)) * (W - L - R);
  const y = (rel: number) => H - B - rel * (H - B - T);
  const matched = candidate?.matchedPeaks ?? [];
  const parts: string[] = [];
  parts.push(
    `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${W} ${H}" width="${W}" height="${H}" role="img" aria-label="${esc(title)}">`,
  );
  // Axes and ticks.
  parts.push(`<line x1="${L}" y1="${H - B}" x2="${W - R}" y2="${H - B}" stroke="#59636e" stroke-width="1"/>`);
  parts.push(`<line x1="${L}" y1="${T}" x2="${L}" y2="${H - B}" stroke="#59636e" stroke-width="1"/>`);
  for (let t = lo; t <= hi + 1e-9; t += step) {
    const xt = x(t).toFixed(1);
    parts.push(`<line x1="${xt}" y1="${H - B}" x2="${xt}" y2="${H - B + 4}" stroke="#59636e"/>`);
    parts.push(
      `<text x="${xt}" y="${H - B + 16}" font-size="11" text-anchor="middle" fill="#59636e">${esc(Number(t.toFixed(2)))}</text>`,
    );
  }
  for (const r of [0, 0.5, 1]) {
    const yt = y(r).toFixed(1);
    parts.push(`<line x1="${L - 4}" y1="${yt}" x2="${L}" y2="${yt}" stroke="#59636e"/>`);
    parts.push(
      `<text x="${L - 7}" y="${(y(r) + 4).toFixed(1)}" font-size="11" text-anchor="end" fill="#59636e">${r * 100}</text>`,
    );
  }
  parts.push(
    `<text x="${(L + W - R) / 2}" y="${H - 4}" font-size="11" text-anchor="middle" fill="#59636e">m/z</text>`,
  );
  parts.push(
    `<text x="12" y="${(T + H - B) / 2}" font-size="11" text-anchor="middle" fill="#59636e" transform="rotate(-90 12 ${(T + H - B) / 2})">rel. intensity %</text>`,
  );
  if (precursorMz !== undefined) {
    const xp = x(precursorMz).toFixed(1);
    parts.push(
      `<path d="M${xp} ${H - B + 1} l-5 8 h10 z" fill="#59636e"><title>precursor m/z ${num(precursorMz, 4)}</title></path>`,
    );
  }
  // Grey sticks first, coloured ones on top.
  const labelled: Array<{ mz: number; rel: number; label: string; colour?: string }> = [];
  const sticks = [...peaks].map(([mz, i]) => ({ mz, rel: i / maxI, m: labelOf(mz, matched) }));
  // The surviving precursor ion: the engine counts it in a tree but does not list it among matched peaks.
  const isPrecursor = (mz: number) =>
    precursorMz !== undefined && Math.abs(mz - precursorMz) <= Math.max(0.003, precursorMz * 20e-6);
  for (const s of sticks.filter((s) => !s.m && isPrecursor(s.mz))) {
    parts.push(
      `<line x1="${x(s.mz).toFixed(1)}" y1="${y(0)}" x2="${x(s.mz).toFixed(1)}" y2="${y(s.rel).toFixed(1)}" stroke="#6b7f99" stroke-width="2"><title>m/z ${num(s.mz, 4)} · ${(s.rel * 100).toFixed(1)} % · precursor ion</title></line>`,
    );
    labelled.push({ mz: s.mz, rel: s.rel, label: 'precursor', colour: '#4a5a70' });
  }
  for (const s of sticks.filter((s) => !s.m && !isPrecursor(s.mz))) {
    parts.push(
      `<line x1="${x(s.mz).toFixed(1)}" y1="${y(0)}" x2="${x(s.mz).toFixed(1)}" y2="${y(s.rel).toFixed(1)}" stroke="#b4bcc5" stroke-width="1.2"><title>m/z ${num(s.mz, 4)} · ${(s.rel * 100).toFixed(1)} % · not explained</title></line>`,
    );
  }
  for (const s of sticks.filter((s) => s.m)) {
    const m = s.m!;
    parts.push(
      `<line x1="${x(s.mz).toFixed(1)}" y1="${y(0)}" x2="${x(s.mz).toFixed(1)}" y2="${y(s.rel).toFixed(1)}" stroke="#2b6cb0" stroke-width="2"><title>m/z ${num(s.mz, 4)} · ${(s.rel * 100).toFixed(1)} % · ${esc(m.label)} ${esc(m.formula)} (${m.ppm} ppm)</title></line>`,
    );
    labelled.push({ mz: s.mz, rel: s.rel, label: m.label });
  }
  // Labels: tallest first; one is skipped where it would overlap one already placed (the table lists all).
  const placed: Array<{ x0: number; x1: number; y0: number; y1: number }> = [];
  for (const p of labelled.sort((a, b) => b.rel - a.rel)) {
    const w = p.label.length * 6.2 + 4;
    const cx = Math.min(Math.max(x(p.mz), L + w / 2), W - R - w / 2);
    let yy = y(p.rel) - 4;
    for (let tries = 0; tries < 4; tries++) {
      const box = { x0: cx - w / 2, x1: cx + w / 2, y0: yy - 11, y1: yy + 2 };
      const clash = placed.some((b) => box.x0 < b.x1 && box.x1 > b.x0 && box.y0 < b.y1 && box.y1 > b.y0);
      if (!clash && box.y0 >= 2) {
        placed.push(box);
        parts.push(
          `<text x="${cx.toFixed(1)}" y="${yy.toFixed(1)}" font-size="11" text-anchor="middle" fill="${p.colour ?? '#1f4e80'}">${esc(p.label)}</text>`,
        );
        break;
      }
      yy -= 13;
    }
  }
  parts.push('</svg>');
  return parts.join('');
}

function candidateTable(r: SpectrumResult): string {
  const rows = r.candidates.slice(0, 5).map((c) => {
    const alt = c.aglycone.alternatives.length > 0 ? c.aglycone.alternatives.join(', ') : '';
    const others = (c.otherTopologies ?? [])
      .map((o) => `${esc(o.topology)}${o.tiedWithBest ? ' =' : ''}`)
      .join('<br>');
    const otherCell = others ? `<div class="meta">also fits: ${others}</div>` : '';
    return `<tr><td class="num">${c.rank}${c.tiedWithPrevious ? ' =' : ''}</td><td class="mono">${esc(c.topology)}${otherCell}</td><td>${esc(alt)}</td><td>${esc(c.ionType ?? r.precursor?.ionType ?? '')}</td><td class="mono">${esc(c.formula)}</td><td class="num">${pct(c.explainedIntensity)}</td><td class="num">${num(c.score, 2)}</td><td class="num">${c.confidenceLevel}</td></tr>`;
  });
  const more =
    r.candidates.length > 5
      ? `<p class="meta">… and ${r.candidates.length - 5} more in the results files.</p>`
      : '';
  return `<table><thead><tr><th class="num">rank</th><th>topology (stacking notation)</th><th>same-formula alternatives</th><th>ion</th><th>formula</th><th class="num">explained</th><th class="num">score</th><th class="num">level</th></tr></thead><tbody>${rows.join('')}</tbody></table>${more}`;
}

function matchedTable(c: CandidateResult): string {
  const rows = [...c.matchedPeaks]
    .sort((a, b) => b.mz - a.mz)
    .map(
      (m) =>
        `<tr><td class="num">${num(m.mz, 4)}</td><td>${esc(m.label)}</td><td class="mono">${esc(m.formula)}</td><td class="num">${num(m.ppm, 2)}</td><td class="num">${m.intensity !== undefined ? pct(m.intensity) : ''}</td></tr>`,
    );
  return `<table class="narrow"><thead><tr><th class="num">m/z</th><th>label</th><th>formula</th><th class="num">ppm</th><th class="num">of total int.</th></tr></thead><tbody>${rows.join('')}</tbody></table>`;
}

function spectrumBlock(r: SpectrumResult, row: SummaryRow, input: ReportInput): string {
  const best = r.status === 'annotated' ? r.candidates[0] : undefined;
  const peaks = input.peaks.get(r.id) ?? [];
  const precursorMz = r.precursor?.mz ?? input.precursors?.get(r.id);
  const facts = [
    `status <strong>${esc(r.status)}</strong>`,
    precursorMz !== undefined ? `precursor m/z ${num(precursorMz, 4)}` : undefined,
    r.precursor?.ionType ? `ion ${esc(r.precursor.ionType)}` : undefined,
    r.rt !== undefined ? `RT ${num(r.rt, 1)} s` : undefined,
    `${peaks.length} peaks`,
    r.tree?.solver ? `tree: ${esc(r.tree.solver)}` : undefined,
  ].filter(Boolean);
  const parts = [`<section class="spectrum" id="${anchor(row)}">`];
  parts.push(`<h3>${row.index + 1}. ${esc(r.id)}</h3>`);
  parts.push(`<div class="facts">${facts.join(' · ')}</div>`);
  if (r.reason) parts.push(`<p>Reason: <code>${esc(r.reason.code)}</code> — ${esc(r.reason.message)}</p>`);
  if (input.withTruth && row.truthText) {
    parts.push(
      `<p class="meta">Simulated truth: ${esc(row.truthText)} — <span class="${row.truth}">${row.truth === 'agrees' ? 'agrees' : 'differs'}</span></p>`,
    );
  }
  parts.push(stickSpectrumSvg(peaks, best, precursorMz, `stick spectrum of ${r.id}`));
  parts.push(
    `<div class="key"><span class="swatch" style="background:#2b6cb0"></span>explained by the best candidate<span class="swatch" style="background:#b4bcc5"></span>other peaks (input, before clean-up)<span class="swatch" style="background:#6b7f99"></span>surviving precursor ion<span style="margin-left:10px">▲ precursor m/z</span></div>`,
  );
  if (best) {
    parts.push(
      `<p class="block-title"><strong>Best candidate</strong> ${esc(bestCell(row))} — the peaks it explains</p>${matchedTable(best)}`,
    );
    parts.push(`<p class="block-title"><strong>Ranked candidates</strong></p>${candidateTable(r)}`);
    const notes = best.notes ?? [];
    if (notes.length > 0) parts.push(`<ul>${notes.map((n) => `<li>${esc(n)}</li>`).join('')}</ul>`);
  }
  if (r.cautions.length > 0) parts.push(`<ul>${r.cautions.map((c) => `<li>${esc(c)}</li>`).join('')}</ul>`);
  parts.push('</section>');
  return parts.join('\n');
}

function summaryTable(input: ReportInput): string {
  const head = [
    '<th class="num">#</th><th>spectrum</th><th>status</th><th>best candidate</th><th>ion</th>',
    '<th class="num">explained</th><th class="num">level</th><th>tie</th>',
    input.withTruth ? '<th>sim. truth</th>' : '',
  ].join('');
  const body = input.rows.map((r) => {
    const truth = input.withTruth
      ? `<td class="${r.truth}">${r.truth === 'agrees' ? 'agrees' : r.truth === 'differs' ? 'differs' : ''}</td>`
      : '';
    const best =
      r.status === 'annotated' && r.topology
        ? `${esc(r.aglycone === 'unknown' ? `unknown ${r.aglyconeFormula ?? ''}` : r.aglycone)}${r.alternatives.length > 0 ? ` <span title="${esc(r.alternatives.join(', '))}">(+${r.alternatives.length})</span>` : ''} <span class="mono">${esc(stackingPart(r.topology))}</span>`
        : `— <code>${esc(r.reason?.code ?? r.status)}</code>`;
    return `<tr class="${r.status}"><td class="num">${r.index + 1}</td><td class="id"><a href="#${anchor(r)}">${esc(r.id)}</a></td><td>${esc(r.status)}</td><td>${best}</td><td>${esc(r.ionType ?? '')}</td><td class="num">${pct(r.explainedIntensity)}</td><td class="num">${r.confidenceLevel ?? ''}</td><td>${r.tied ? '=' : ''}</td>${truth}</tr>`;
  });
  return `<table><thead><tr>${head}</tr></thead><tbody>${body.join('\n')}</tbody></table>`;
}

/** The demo's HTML report: one self-contained page (inline CSS and SVG, no scripts, no external assets). */
export function renderReportHtml(input: ReportInput): string {
  const t = input.tally;
  const byId = new Map(input.results.map((r) => [r.id, r]));
  const blocks = input.rows.map((row) => {
    const r = byId.get(row.id);
    return r ? spectrumBlock(r, row, input) : '';
  });
  const selfCheck = input.withTruth
    ? `<p class="tally"><strong>Self-check on simulated data — not a validation.</strong> The best candidate agrees with the
simulator's truth for <strong>${t.glycosidesAgree} of ${t.glycosides}</strong> glycoside spectra (aglycone or one of its
same-formula ties, residues and acyl groups; the stacking too for ${t.stackingAgree}), and ${t.decoysUnassigned} of
${t.decoys} spectra that are not glycosides were left unassigned. The simulator and Peel share the textbook chemistry,
so agreement here shows the path works end to end; it says little about real instrument data.</p>`
    : '';
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>Peel demo report — simulated data</title>
<style>${CSS}</style>
</head>
<body>
<h1>Peel demo report</h1>
<p class="sub">Glycoside annotation of a demo batch — ${esc(input.results.length)} MS2 spectra</p>
<div class="caution" role="note">
<strong class="big">SIMULATED DATA — PUTATIVE IDENTIFICATIONS</strong>
Every spectrum here was generated by Peel's simulator for a fictional scenario; nothing was measured on an
instrument, and every name of a place, programme or selection is invented.
${esc(input.disclaimer ?? 'Results are putative identifications from MS/MS alone.')}
</div>
<p class="scenario">${esc(input.scenario.join(' '))}</p>
<p class="meta">${esc(input.howScored)} Rule set ${esc(input.ruleset.name)} ${esc(input.ruleset.version)}
(sha256 ${esc(input.ruleset.sha256.slice(0, 12))}…), Peel ${esc(input.peelVersion)}, report made ${esc(input.generatedAt)}.</p>

<h2>Summary</h2>
<p class="tally">${t.spectra} spectra: <strong>${t.annotated}</strong> annotated, <strong>${t.unassigned}</strong>
unassigned, <strong>${t.errors}</strong> error${t.errors === 1 ? '' : 's'}.</p>
${selfCheck}
${summaryTable(input)}
<p class="legend">(+N): N other library aglycones have the same ion formula — MS/MS cannot tell them apart; hover to
see them. Tie "=": the next-ranked candidate scores the same; "also fits" lists other stackings of the same residues
("=" when the spectrum supports them as well). Level: confidence on the Schymanski et al. 2014 scale
(1 best; level 1 needs a reference standard). Explained: share of the spectrum's total intensity the best candidate
explains.</p>

<h2>Spectra</h2>
${blocks.join('\n')}
<footer>Made by <code>npm run demo</code>. The same results are in results.json, results.csv and results.mztab beside
this file.</footer>
</body>
</html>
`;
}
