import { createHash } from 'node:crypto';
import type { Spectrum } from '../engine/spectrum/spectrum.js';

/** JSON with object keys sorted, so equal values always give equal text (and equal hashes). */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(value, (_k, v) => {
    if (v && typeof v === 'object' && !Array.isArray(v)) {
      const out: Record<string, unknown> = {};
      for (const k of Object.keys(v).sort()) out[k] = (v as Record<string, unknown>)[k];
      return out;
    }
    return v;
  });
}

/** Hex SHA-256 of a string or bytes. */
export function sha256Hex(data: string | Uint8Array): string {
  return createHash('sha256').update(data).digest('hex');
}

/**
 * Content hash of a spectrum: everything that can change its score (peaks, precursor, polarity, isotopes,
 * metadata, retention time), not its id — the same measurement under another name is the same spectrum.
 */
export function spectrumHash(s: Spectrum): string {
  const { id: _id, ...content } = s;
  return sha256Hex(canonicalJson(content));
}

/**
 * The part of a result's cache key that is not the spectrum: rule set, tolerances, user candidates and the
 * engine version (so a new engine never serves an old engine's results).
 */
export function scoringKey(parts: {
  rulesetSha256: string;
  options: unknown;
  engineVersion: string;
}): string {
  return sha256Hex(canonicalJson(parts)).slice(0, 32);
}
