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
