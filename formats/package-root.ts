import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

let root: string | undefined;

/**
 * The directory of Peel's package.json, found by walking up from this module, so that data files resolve
 * the same from source (`formats/`) and from the build (`dist/formats/`).
 */
export function packageRoot(): string {
  if (root) return root;
  let dir = dirname(fileURLToPath(import.meta.url));
  for (;;) {
    if (existsSync(join(dir, 'package.json')) && existsSync(join(dir, 'rules'))) {
      root = dir;
      return dir;
    }
    const up = dirname(dir);
    if (up === dir) throw new Error(`no package root above ${dirname(fileURLToPath(import.meta.url))}`);
    dir = up;
  }
}

let version: string | undefined;

/** Peel's version, from its package.json. */
export function peelVersion(): string {
  if (version) return version;
  const pkg = JSON.parse(readFileSync(join(packageRoot(), 'package.json'), 'utf8')) as { version?: unknown };
  version = typeof pkg.version === 'string' ? pkg.version : '0.0.0';
  return version;
}
