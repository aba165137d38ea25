import type { Peak } from '../engine/spectrum/spectrum.js';

/** True when the peaks are in ascending m/z order. */
export function peaksSorted(peaks: readonly Peak[]): boolean {
  for (let i = 1; i < peaks.length; i++) if (peaks[i]![0] < peaks[i - 1]![0]) return false;
  return true;
}

/** Sorts peaks by ascending m/z in place (stable, so equal m/z keep their file order). */
export function sortPeaks(peaks: Peak[]): Peak[] {
  return peaks.sort((a, b) => a[0] - b[0]);
}

/** A decimal number as written in text formats: no hex, no `Infinity`, no empty string. */
const DECIMAL = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;

/** Parses a decimal number strictly; `NaN` for anything else (including `nan`, `inf`, `0x10`, ``). */
export function parseDecimal(text: string): number {
  return DECIMAL.test(text) ? Number(text) : Number.NaN;
}
