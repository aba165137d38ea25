// Builds spectra from the data-driven case files in test/fixtures/engine/ and reads results back.
import { readFileSync } from 'node:fs';
import { formulaMz, parseFormula } from '../../../engine/chem/formula.js';
import type { CandidateResult } from '../../../engine/report/result.js';
import type { Spectrum, SpectrumMetadata } from '../../../engine/spectrum/spectrum.js';

/** One peak of a case: an ion formula (m/z computed), a written-out m/z, or both (then they must agree). */
export interface CasePeak {
  formula?: string;
  mz?: number;
  /** Measurement error added to the m/z, ppm. */
  ppm?: number;
  intensity: number;
  note?: string;
}

/** What a case expects of the top-ranked candidate (only what the chemistry settles). */
export interface CaseExpectation {
  status: 'annotated' | 'unassigned';
  /** Acceptable ion types of the precursor (same-formula readings may differ: [M]+ vs [M+H]+). */
  ionTypes?: string[];
  /** Residue / acyl multiset by unit name. */
  composition?: Record<string, number>;
  /** Compositions no candidate may have. */
  notCompositions?: Record<string, number>[];
  /** Y0 ion formula (aglycone with its charge carrier). */
  aglyconeFormula?: string;
  /** Names that must all be reported, as the name or among the alternatives. */
  names?: string[];
  /** Stacking notation after the aglycone name. */
  topology?: string;
  /** How many substituents have each linkage. */
  linkages?: Record<string, number>;
  matched?: { mz: number; label?: string; labelIncludes?: string; formula?: string }[];
  /** Edges `[parent formula, child formula]` the reported tree must hold (a published pathway). */
  treeEdges?: [string, string][];
  /** Where the pathway of `treeEdges` comes from. */
  treeSource?: string;
  /** Reason codes accepted for an unassigned result. */
  reasons?: string[];
}

export interface SpectrumCase {
  id: string;
  source: string;
  /** Near-isobaric traps: the pair the case belongs to. */
  pair?: string;
  polarity: 'positive' | 'negative';
  precursor: { formula?: string; mz?: number; ppm?: number; charge?: number };
  peaks: CasePeak[];
  metadata?: SpectrumMetadata;
  /** A neutral loss between two ion formulas that the source states. */
  loss?: { from: string; to: string; mass: number };
  expect: CaseExpectation;
}

/** Reads a case file from test/fixtures/engine/. */
export function readCases(file: string): SpectrumCase[] {
  const url = new URL(`../../fixtures/engine/${file}`, import.meta.url);
  return (JSON.parse(readFileSync(url, 'utf8')) as { cases: SpectrumCase[] }).cases;
}

/** m/z of an ion formula written with its charge, e.g. `C15H11O6+` (electron-corrected). */
export const ionFormulaMz = (formula: string): number => formulaMz(parseFormula(formula));

/** The exact m/z of a case peak (before the measurement error). */
export function exactMz(p: { formula?: string; mz?: number }): number {
  if (p.mz !== undefined) return p.mz;
  if (p.formula !== undefined) return ionFormulaMz(p.formula);
  throw new Error('a peak needs a formula or an m/z');
}

const measured = (p: { formula?: string; mz?: number; ppm?: number }) =>
  exactMz(p) * (1 + (p.ppm ?? 0) * 1e-6);

/** The spectrum a case describes. */
export function caseSpectrum(c: SpectrumCase): Spectrum {
  const charge = c.precursor.charge ?? (c.polarity === 'positive' ? 1 : -1);
  return {
    id: c.id,
    polarity: c.polarity,
    precursor: { mz: measured(c.precursor), charge },
    peaks: c.peaks.map((p) => [measured(p), p.intensity] as [number, number]),
    ...(c.metadata ? { metadata: c.metadata } : {}),
  };
}

/** A candidate's residue / acyl multiset by name. */
export function compositionOf(c: CandidateResult): Record<string, number> {
  const out: Record<string, number> = {};
  for (const s of c.substituents) out[s.residue] = (out[s.residue] ?? 0) + 1;
  return out;
}

/** How many substituents of a candidate have each linkage. */
export function linkagesOf(c: CandidateResult): Record<string, number> {
  const out: Record<string, number> = {};
  for (const s of c.substituents) out[s.linkage] = (out[s.linkage] ?? 0) + 1;
  return out;
}

/** Every aglycone name a candidate reports: its name and the same-formula alternatives. */
export const namesOf = (c: CandidateResult): string[] => [c.aglycone.name, ...c.aglycone.alternatives];

/** The stacking notation of a candidate without its aglycone name. */
export const stackingOf = (c: Pick<CandidateResult, 'topology'>): string =>
  c.topology.slice(c.topology.indexOf('['));
