/**
 * The instrument of the simulator: turns ideal peaks into a centroided MS2 peak list the way a Q-TOF-class
 * instrument would report it — low-m/z cut-off, detection limit, ¹³C/¹⁸O isotope peaks with abundances
 * from the formula, co-isolated ions, noise peaks, unresolved neighbours merged into one centroid,
 * 2–4 ppm systematic calibration error plus random error, at most 100 peaks, absolute intensities.
 */
import { type Formula, formatFormula, formulaMz, isotopeRatios, key } from './chem.js';
import type { IdealPeak, PeakKind } from './fragments.js';
import type { Rng } from './prng.js';

/** A peak of a simulated spectrum with what produced it (the truth of the peak list). */
export interface SimPeak {
  mz: number;
  intensity: number;
  /** Exact m/z before calibration error (undefined for noise and for merged centroids). */
  theoreticalMz?: number;
  /** Hill formula of the strongest contributor, with charge. */
  formula?: string;
  labels: string[];
  kinds: PeakKind[];
}

/** Instrument settings; each unset one is drawn per spectrum. */
export interface InstrumentOptions {
  /** Systematic calibration error, ppm (drawn ±2–4). */
  systematicPpm?: number;
  /** Resolving power m/Δm (FWHM), drawn 20,000–60,000. */
  resolution?: number;
  /** Noise peaks as a fraction of the real peak count, drawn 0.1–0.6. */
  noiseFraction?: number;
  /** Peaks weaker than this fraction of the base peak are not detected, drawn 0.2–0.8 %. */
  detectionLimit?: number;
  /** Lowest recorded m/z, drawn 50–90. */
  lowMz?: number;
  /** Most peaks reported. @defaultValue 100 */
  maxPeaks?: number;
}

/** What the instrument did, for the truth file. */
export interface InstrumentRecord {
  systematicPpm: number;
  resolution: number;
  noisePeaks: number;
  lowMz: number;
}

interface Work {
  mz: number;
  /** Set when unresolved neighbours were merged into this centroid. */
  merged?: boolean;
  rel: number;
  z: number;
  formula?: Formula;
  labels: string[];
  kinds: PeakKind[];
}

/** Merges ideal peaks with the same ion formula (or m/z for formula-less peaks). */
function collapse(ideal: readonly IdealPeak[]): Work[] {
  const byKey = new Map<string, Work & { top: number }>();
  for (const p of ideal) {
    if (!(p.intensity > 0)) continue;
    const k = p.formula ? key(p.formula) : `mz:${p.mz!.toFixed(6)}`;
    const mz = p.formula ? formulaMz(p.formula) : p.mz!;
    const z = p.formula ? p.formula.charge : 1;
    const w = byKey.get(k);
    if (!w) {
      const v: Work & { top: number } = {
        mz,
        rel: p.intensity,
        z,
        labels: [p.label],
        kinds: [p.kind],
        top: p.intensity,
      };
      if (p.formula) v.formula = p.formula;
      byKey.set(k, v);
    } else {
      w.rel += p.intensity;
      if (p.intensity > w.top) {
        w.top = p.intensity;
        w.labels.unshift(p.label);
        w.kinds.unshift(p.kind);
      } else {
        w.labels.push(p.label);
        w.kinds.push(p.kind);
      }
    }
  }
  return [...byKey.values()].map(({ top: _t, ...w }) => w);
}

/** Ideal → normalised to the base peak, cut to the recorded range and detection limit, with isotopes. */
function record(
  ideal: readonly IdealPeak[],
  lowMz: number,
  highMz: number,
  detection: number,
  kind?: PeakKind,
): Work[] {
  const peaks = collapse(ideal).filter((p) => p.mz >= lowMz && p.mz <= highMz);
  const base = Math.max(0, ...peaks.map((p) => p.rel));
  if (base <= 0) return [];
  const out: Work[] = [];
  for (const p of peaks) {
    p.rel /= base;
    if (p.rel < detection) continue;
    if (kind) p.kinds = [kind];
    out.push(p);
    if (!p.formula) continue;
    const iso = isotopeRatios(p.formula);
    const az = Math.abs(p.z) || 1;
    const add = (ratio: number, shift: number, n: number): void => {
      const rel = p.rel * ratio;
      if (rel < detection || p.mz + shift / az > highMz) return;
      out.push({
        mz: p.mz + shift / az,
        rel,
        z: p.z,
        labels: p.labels.map((l) => `${l} M+${n}`),
        kinds: ['isotope'],
      });
    };
    add(iso.m1, iso.m1Shift, 1);
    add(iso.m2, iso.m2Shift, 2);
  }
  return out;
}

/** Context of one spectrum. */
export interface RecordContext {
  rng: Rng;
  precursorMz: number;
  precursorCharge: number;
  /** Ideal peaks of a co-isolated compound and their scale relative to the main base peak. */
  coIsolated?: { peaks: readonly IdealPeak[]; scale: number };
  options?: InstrumentOptions;
}

/** The centroided peak list of one spectrum and what the instrument did. */
export function acquire(
  ideal: readonly IdealPeak[],
  ctx: RecordContext,
): { peaks: SimPeak[]; record: InstrumentRecord } {
  const { rng } = ctx;
  const o = ctx.options ?? {};
  const systematicPpm = o.systematicPpm ?? (rng.chance(0.5) ? 1 : -1) * rng.uniform(2, 4);
  const resolution = o.resolution ?? rng.uniform(20000, 60000);
  const detection = o.detectionLimit ?? rng.uniform(0.002, 0.008);
  const lowMz = o.lowMz ?? rng.uniform(50, 90);
  // Singly charged fragments of a multiply charged precursor lie above its m/z: record up to its mass.
  const z = Math.abs(ctx.precursorCharge) || 1;
  const highMz = z > 1 ? ctx.precursorMz * z + 2 : ctx.precursorMz + 3.5;
  const maxPeaks = o.maxPeaks ?? 100;

  const work = record(ideal, lowMz, highMz, detection);
  const realCount = work.length;
  if (ctx.coIsolated) {
    const co = record(ctx.coIsolated.peaks, lowMz, highMz, detection / ctx.coIsolated.scale, 'co-isolated');
    for (const p of co) {
      p.rel *= ctx.coIsolated.scale;
      p.labels = p.labels.map((l) => `co:${l}`);
      p.kinds = ['co-isolated'];
    }
    work.push(...co);
  }
  // Noise: random m/z, low intensity, 10–60 % of the real peak count.
  const noiseFraction = o.noiseFraction ?? rng.uniform(0.1, 0.6);
  const noisePeaks = Math.round(noiseFraction * realCount);
  for (let i = 0; i < noisePeaks; i++) {
    work.push({
      mz: rng.uniform(lowMz, Math.max(lowMz + 10, z > 1 ? highMz - 2 : ctx.precursorMz + 1)),
      rel: rng.logUniform(Math.max(detection, 0.002), 0.05),
      z: 1,
      labels: ['noise'],
      kinds: ['noise'],
    });
  }
  // Unresolved neighbours become one centroid (closer than ~0.6 FWHM at this resolving power).
  work.sort((a, b) => a.mz - b.mz);
  const merged: Work[] = [];
  for (const p of work) {
    const last = merged[merged.length - 1];
    if (last && p.mz - last.mz < (0.6 * p.mz) / resolution) {
      const tot = last.rel + p.rel;
      const strongerIsNew = p.rel > last.rel;
      last.mz = (last.mz * last.rel + p.mz * p.rel) / tot;
      last.merged = true;
      last.rel = tot;
      if (strongerIsNew) {
        last.labels = [...p.labels, ...last.labels];
        last.kinds = [...p.kinds, ...last.kinds];
        if (p.formula) last.formula = p.formula;
        else delete last.formula;
        last.z = p.z;
      } else {
        last.labels.push(...p.labels);
        last.kinds.push(...p.kinds);
      }
      continue;
    }
    merged.push({ ...p, labels: [...p.labels], kinds: [...p.kinds] });
  }
  // Keep the strongest, then calibrate with error and scale to counts.
  const kept = merged.sort((a, b) => b.rel - a.rel).slice(0, maxPeaks);
  const baseAbs = rng.logUniform(5e3, 5e6);
  const peaks: SimPeak[] = kept.map((p) => {
    const sd = 0.5 + 1.5 * (1 - Math.sqrt(Math.min(1, p.rel)));
    const random = Math.max(-3 * sd, Math.min(3 * sd, rng.normal(0, sd)));
    const mz = p.mz * (1 + (systematicPpm + random) / 1e6) + rng.normal(0, 0.00015);
    const intensity = Math.max(1, p.rel * baseAbs * rng.logNormal(0, 0.06));
    const out: SimPeak = { mz, intensity, labels: p.labels, kinds: p.kinds };
    if (p.formula) out.formula = formatFormula(p.formula);
    // The exact m/z of a peak with one origin (or one formula); a merged centroid has none.
    if (!p.merged && p.kinds[0] !== 'noise') out.theoreticalMz = p.mz;
    return out;
  });
  peaks.sort((a, b) => a.mz - b.mz);
  return { peaks, record: { systematicPpm, resolution, noisePeaks, lowMz } };
}

/** Measured precursor m/z: the calibration error plus a little random error. */
export function measurePrecursor(theoreticalMz: number, systematicPpm: number, rng: Rng): number {
  return theoreticalMz * (1 + (systematicPpm + rng.normal(0, 0.6)) / 1e6);
}

/** MS1 isotope envelope of the precursor (monoisotopic, M+1, M+2), with a few % intensity noise. */
export function precursorEnvelope(ion: Formula, systematicPpm: number, rng: Rng): [number, number][] {
  const mz = formulaMz(ion);
  const z = Math.abs(ion.charge) || 1;
  const iso = isotopeRatios(ion);
  const base = rng.logUniform(1e5, 1e8);
  const pts: [number, number][] = [
    [mz, base],
    [mz + iso.m1Shift / z, base * iso.m1],
    [mz + iso.m2Shift / z, base * iso.m2],
  ];
  return pts.map(([m, i]) => [
    round(m * (1 + (systematicPpm + rng.normal(0, 0.8)) / 1e6), 5),
    round(i * rng.logNormal(0, 0.03), 1),
  ]);
}

/** Rounds to a number of decimals. */
export function round(x: number, decimals: number): number {
  const k = 10 ** decimals;
  return Math.round(x * k) / k;
}
