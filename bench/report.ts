import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { dirname } from 'node:path';

const DOC = 'docs/performance.md';
const HEADER = `# Peel — measured performance

Every number here is written by a benchmark in \`bench/\` (\`npm run bench -- <name>\`) on the machine named in
its section; nothing is typed in by hand. Comparisons are ratios measured in the same run.
`;

/**
 * Replaces (or appends) one benchmark's section of docs/performance.md, between
 * `<!-- bench:NAME -->` and `<!-- /bench:NAME -->`, leaving the other sections as they are.
 */
export function writeSection(name: string, markdown: string, doc = DOC): void {
  const start = `<!-- bench:${name} -->`;
  const end = `<!-- /bench:${name} -->`;
  const block = `${start}\n${markdown.trim()}\n${end}`;
  let text = existsSync(doc) ? readFileSync(doc, 'utf8') : HEADER;
  const i = text.indexOf(start);
  const j = text.indexOf(end);
  text =
    i >= 0 && j > i
      ? text.slice(0, i) + block + text.slice(j + end.length)
      : `${text.trimEnd()}\n\n${block}\n`;
  mkdirSync(dirname(doc), { recursive: true });
  writeFileSync(doc, text);
}

/** One line naming the machine and runtime a measurement was taken on. */
export async function machineLine(): Promise<string> {
  const os = await import('node:os');
  const cpu = os.cpus()[0]?.model ?? 'unknown CPU';
  return `${os.cpus().length} × ${cpu}, ${(os.totalmem() / 2 ** 30).toFixed(0)} GiB, Node ${process.version}, ${new Date().toISOString().slice(0, 10)}`;
}

/**
 * Runs this benchmark's own script again in a fresh Node process (`--child ...args`) and returns the JSON
 * object it prints on its last line of stdout (a fresh process measures RSS from a clean start).
 */
export async function runJsonChild<T>(scriptUrl: string, args: string[], what: string): Promise<T> {
  const { spawn } = await import('node:child_process');
  const { fileURLToPath } = await import('node:url');
  return new Promise((resolve, reject) => {
    const p = spawn(process.execPath, [fileURLToPath(scriptUrl), '--child', ...args], {
      stdio: ['ignore', 'pipe', 'inherit'],
    });
    let out = '';
    p.stdout.on('data', (d) => {
      out += d;
    });
    p.on('error', reject);
    p.on('close', (code) => {
      if (code !== 0) reject(new Error(`${what} child exited with ${code}`));
      else resolve(JSON.parse(out.trim().split('\n').at(-1)!) as T);
    });
  });
}
