// Runs one benchmark by name: `npm run bench -- decomposition`. Each writes its own section of docs/performance.md.
const BENCHES: Record<string, () => Promise<{ run: (args: string[]) => Promise<void> }>> = {
  decomposition: () => import('./decomposition.js'),
  'mzml-memory': () => import('./mzml-memory.js'),
  quality: () => import('./quality.js'),
  e2e: () => import('./e2e.js'),
  'score-speed': () => import('./score-speed.js'),
  'score-memory': () => import('./score-memory.js'),
  paired: () => import('./paired.js'),
};

const [name, ...args] = process.argv.slice(2);
if (!name || !BENCHES[name]) {
  console.error(`usage: npm run bench -- <${Object.keys(BENCHES).join('|')}> [args]`);
  process.exitCode = 2;
} else {
  await (await BENCHES[name]()).run(args);
}
