/**
 * Writes simulated sets to files: MGF (with comment lines saying the data are simulated), a JSON spectra
 * document, and the JSON truth file.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Spectrum } from '../../engine/spectrum/spectrum.js';
import { GENERATOR, SIMULATED_NOTE, type SimulatedSpectrum } from './generate.js';
import type { SimTruthFile } from './truth.js';

/** What a set's files say about how they were made. */
export interface SetProvenance {
  seed: number | string;
  /** Extra comment lines (a scenario description). */
  comments?: readonly string[];
}

const fmt = (x: number, decimals: number): string => x.toFixed(decimals);

/** One spectrum as an MGF block. */
export function mgfBlock(s: Spectrum): string {
  const lines = ['BEGIN IONS', `TITLE=${s.id}`];
  lines.push(
    `PEPMASS=${fmt(s.precursor.mz, 5)}${s.precursor.intensity !== undefined ? ` ${fmt(s.precursor.intensity, 0)}` : ''}`,
  );
  if (s.precursor.charge !== undefined) {
    const z = s.precursor.charge;
    lines.push(`CHARGE=${Math.abs(z)}${z > 0 ? '+' : '-'}`);
  }
  if (s.polarity) lines.push(`POLARITY=${s.polarity}`);
  if (s.rt !== undefined) lines.push(`RTINSECONDS=${fmt(s.rt, 2)}`);
  for (const [k, v] of Object.entries(s.metadata ?? {})) {
    if (v === undefined) continue;
    lines.push(`${k.toUpperCase()}=${String(v).replace(/[\r\n]+/g, ' ')}`);
  }
  for (const [mz, intensity] of s.peaks) lines.push(`${fmt(mz, 5)} ${fmt(intensity, 1)}`);
  lines.push('END IONS');
  return lines.join('\n');
}

/** A whole MGF file; the first lines are comments saying the data are simulated. */
export function toMgf(spectra: readonly Spectrum[], p: SetProvenance): string {
  const head = [
    `# ${SIMULATED_NOTE}`,
    `# generator: ${GENERATOR}; seed: ${p.seed}; spectra: ${spectra.length}`,
    ...(p.comments ?? []).map((c) => `# ${c}`),
  ];
  return `${head.join('\n')}\n\n${spectra.map(mgfBlock).join('\n\n')}\n`;
}

/** The JSON spectra document (`{ "spectra": [...] }`, readable by Peel's JSON reader). */
export function toJsonDocument(spectra: readonly Spectrum[], p: SetProvenance): string {
  return `${JSON.stringify(
    {
      simulated: true,
      note: SIMULATED_NOTE,
      generator: GENERATOR,
      seed: p.seed,
      ...(p.comments ? { scenario: p.comments } : {}),
      spectra,
    },
    null,
    1,
  )}\n`;
}

/** The truth file of a set. */
export function toTruthFile(set: readonly SimulatedSpectrum[], p: SetProvenance): SimTruthFile {
  return {
    simulated: true,
    note: SIMULATED_NOTE,
    generator: GENERATOR,
    seed: p.seed,
    count: set.length,
    truths: set.map((x) => x.truth),
  };
}

/** Writes `<base>.mgf`, `<base>.json` (optional) and `<base>.truth.json` into a folder; returns the paths. */
export function writeSetFiles(
  dir: string,
  base: string,
  set: readonly SimulatedSpectrum[],
  p: SetProvenance,
  options: { json?: boolean } = {},
): string[] {
  mkdirSync(dir, { recursive: true });
  const spectra = set.map((x) => x.spectrum);
  const paths: string[] = [];
  const mgf = join(dir, `${base}.mgf`);
  writeFileSync(mgf, toMgf(spectra, p));
  paths.push(mgf);
  if (options.json) {
    const json = join(dir, `${base}.json`);
    writeFileSync(json, toJsonDocument(spectra, p));
    paths.push(json);
  }
  const truth = join(dir, `${base}.truth.json`);
  writeFileSync(truth, `${JSON.stringify(toTruthFile(set, p), null, 1)}\n`);
  paths.push(truth);
  return paths;
}
