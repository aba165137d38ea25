// engine/ is pure (CONVENTIONS.md §1). Biome's rules catch forbidden imports and globals; this catches the
// member calls a global-name rule cannot see (Math.random, crypto.getRandomValues).
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';

const FORBIDDEN = [/\bMath\.random\s*\(/, /\bcrypto\.getRandomValues\b/, /\bimport\s*\(/];
const bad = [];
function walk(dir) {
  for (const name of readdirSync(dir)) {
    const p = join(dir, name);
    if (statSync(p).isDirectory()) walk(p);
    else if (p.endsWith('.ts')) {
      readFileSync(p, 'utf8')
        .split('\n')
        .forEach((line, i) => {
          if (/^\s*(\/\/|\*)/.test(line)) return;
          for (const re of FORBIDDEN) if (re.test(line)) bad.push(`${p}:${i + 1}: ${line.trim()}`);
        });
    }
  }
}
walk('engine');
if (bad.length > 0) {
  console.error('engine/ must stay pure (no randomness, no dynamic import):\n' + bad.join('\n'));
  process.exit(1);
}
