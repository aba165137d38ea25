import { createHash } from 'node:crypto';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { peelVersion } from '../formats/package-root.js';

let cached: string | undefined;

/**
 * Peel's version plus a hash of the engine's code as installed (`dist/engine`, or `engine/` when run from
 * sources). It is part of every result-cache key, so a changed engine never serves results the previous one
 * computed, even when the package version was not bumped.
 */
export function engineVersion(): string {
  if (cached) return cached;
  const root = fileURLToPath(new URL('../engine', import.meta.url));
  const hash = createHash('sha256');
  const walk = (dir: string) => {
    for (const name of readdirSync(dir).sort()) {
      const p = join(dir, name);
      if (statSync(p).isDirectory()) walk(p);
      else if (/\.(js|ts)$/.test(name) && !name.endsWith('.d.ts')) hash.update(name).update(readFileSync(p));
    }
  };
  try {
    walk(root);
    cached = `${peelVersion()}+${hash.digest('hex').slice(0, 12)}`;
  } catch {
    cached = peelVersion();
  }
  return cached;
}
