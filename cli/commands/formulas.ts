import {
  createDecomposer,
  createFormulaFilter,
  DEFAULT_RANGES,
  type Decomposition,
  type ElectronState,
  type ElementRanges,
  formatElementRanges,
  formatFormula,
  type IonType,
  NO_FILTERS,
  parseElementRanges,
  resolveIonType,
} from '../../engine/chem/index.js';
import { type CliIo, type Command, println, UsageError } from '../io.js';

/** Usage text of `peel formulas`. */
export const FORMULAS_USAGE = `Usage: peel formulas MZ... [--charge N | --ion "[M+H]+"] [--ppm N] [--elements "C0-60 H0-120 N0-10 O0-30 P0-4 S0-4"]
                     [--electrons even|odd|any] [--no-filters] [--limit N] [--json]

Lists every formula within tolerance of each mass given, best mass error first, with its error in ppm and
its RDBE (ring and double-bond equivalents).

What the numbers are:
  --charge N      each MZ is the m/z of an ion of charge N (signed: 1, -1, 2 …); the formulas are those of the
                  ion itself, e.g. C21H21O11+ for 449.10784 with --charge 1 (electron mass accounted for).
  --ion TYPE      each MZ is the m/z of the given ion type ([M]+ [M+H]+ [M+Na]+ [M+K]+ [M+NH4]+ [M-H]- [M+HCOO]-
                  [M+Cl]- [M-2H]2- [M+2H]2+ …, or any [nM±X…]z± you write); the formulas are those of the
                  neutral molecule M, and the ppm error is that of the ion's m/z.
  neither         each MZ is read as a neutral monoisotopic mass (a molecule's mass, or a loss between two
                  peaks). A peak's m/z is an ion: give --charge or --ion for it.

Options:
  --ppm N         tolerance in ppm of the given mass (default 5)
  --elements R    element ranges searched (default "${formatElementRanges(DEFAULT_RANGES)}"; Na, K, Cl on request,
                  e.g. "C0-60 H0-120 O0-30 Na0-1")
  --electrons S   expected electron state: even (default; molecules and ESI ions), odd (radicals), any
  --no-filters    keep every formula: no RDBE, SENIOR, or Kind & Fiehn element-ratio checks
  --limit N       show at most N formulas per mass (default: all)
  --json          print [{"mz": …, "formulas": [{"formula": …, "ppm": …, "rdbe": …}, …]}, …], one entry per MZ

Formulas from a mass are putative: several formulas fit any mass, and one formula fits many structures.`;

interface FormulasFlags {
  masses: number[];
  charge: number | undefined;
  ion: IonType | undefined;
  ppm: number;
  ranges: ElementRanges;
  electrons: ElectronState;
  filters: boolean;
  limit: number | undefined;
  json: boolean;
}

function parseFlags(argv: string[]): FormulasFlags {
  const flags: FormulasFlags = {
    masses: [],
    charge: undefined,
    ion: undefined,
    ppm: 5,
    ranges: DEFAULT_RANGES,
    electrons: 'even',
    filters: true,
    limit: undefined,
    json: false,
  };
  for (let i = 0; i < argv.length; i++) {
    const arg = argv[i]!;
    const eq = arg.startsWith('--') ? arg.indexOf('=') : -1;
    const name = eq > 0 ? arg.slice(0, eq) : arg;
    const value = (): string => {
      if (eq > 0) return arg.slice(eq + 1);
      const next = argv[i + 1];
      if (next === undefined) throw new UsageError(`${name} needs a value`);
      i++;
      return next;
    };
    switch (name) {
      case '--json':
        flags.json = true;
        break;
      case '--no-filters':
        flags.filters = false;
        break;
      case '--charge': {
        const v = value();
        const z = Number(v.replace(/^\+/, ''));
        if (!Number.isInteger(z) || Math.abs(z) > 20) {
          throw new UsageError(`--charge must be a whole number such as 1 or -1, got "${v}"`);
        }
        flags.charge = z;
        break;
      }
      case '--ion': {
        const v = value();
        try {
          flags.ion = resolveIonType(v);
        } catch (err) {
          throw new UsageError(`--ion: ${(err as Error).message}`, { cause: err });
        }
        break;
      }
      case '--ppm': {
        const v = value();
        const ppm = Number(v);
        if (!Number.isFinite(ppm) || ppm <= 0 || ppm > 1e6) {
          throw new UsageError(`--ppm must be a number > 0, got "${v}"`);
        }
        flags.ppm = ppm;
        break;
      }
      case '--elements': {
        const v = value();
        try {
          flags.ranges = parseElementRanges(v);
        } catch (err) {
          throw new UsageError(`--elements: ${(err as Error).message}`, { cause: err });
        }
        break;
      }
      case '--electrons': {
        const v = value();
        if (v !== 'even' && v !== 'odd' && v !== 'any') {
          throw new UsageError(`--electrons must be even, odd or any, got "${v}"`);
        }
        flags.electrons = v;
        break;
      }
      case '--limit': {
        const v = value();
        const n = Number(v);
        if (!Number.isInteger(n) || n < 1)
          throw new UsageError(`--limit must be a whole number ≥ 1, got "${v}"`);
        flags.limit = n;
        break;
      }
      default: {
        if (arg.startsWith('--')) throw new UsageError(`unknown option ${arg}\n\n${FORMULAS_USAGE}`);
        const m = Number(arg);
        if (!/^\d*\.?\d+(?:[eE][+-]?\d+)?$/.test(arg) || !Number.isFinite(m) || m <= 0) {
          throw new UsageError(`not a mass: "${arg}" (give positive numbers, e.g. 449.10784)`);
        }
        flags.masses.push(m);
      }
    }
  }
  if (flags.masses.length === 0) throw new UsageError(`give at least one mass\n\n${FORMULAS_USAGE}`);
  if (flags.ion && flags.charge !== undefined) {
    throw new UsageError(
      'give either --charge (formulas of the ion) or --ion (formulas of the molecule), not both',
    );
  }
  return flags;
}

const round = (x: number, digits: number): number => {
  const f = 10 ** digits;
  return Math.round(x * f) / f;
};

/**
 * `peel formulas MZ...`: candidate formulas for each mass, best mass error first (see {@link FORMULAS_USAGE}).
 */
export const formulasCommand: Command = async (argv: string[], io: CliIo) => {
  if (argv.includes('--help') || argv.includes('-h')) {
    println(io.stdout, FORMULAS_USAGE);
    return 0;
  }
  const flags = parseFlags(argv);
  const decomposer = createDecomposer({ ranges: flags.ranges });
  const filter = flags.filters
    ? createFormulaFilter({ rdbe: { electrons: flags.electrons } })
    : createFormulaFilter(NO_FILTERS);
  const tol = { ppm: flags.ppm };
  const results = flags.masses.map((mz) => ({
    mz,
    formulas: decomposer.decompose(mz, tol, {
      charge: flags.charge ?? 0,
      ...(flags.ion ? { ion: flags.ion } : {}),
      filter,
      ...(flags.limit ? { limit: flags.limit } : {}),
    }),
  }));

  if (flags.json) {
    const out = results.map((r) => ({
      mz: r.mz,
      formulas: r.formulas.map((d) => ({
        formula: formatFormula(d.formula),
        ppm: round(d.ppm, 3),
        rdbe: d.rdbe,
      })),
    }));
    println(io.stdout, JSON.stringify(out));
    return 0;
  }

  const what = flags.ion
    ? `m/z of ${flags.ion.name}; formulas of the neutral molecule M`
    : flags.charge
      ? `m/z of an ion of charge ${flags.charge > 0 ? '+' : ''}${flags.charge}; formulas of the ion`
      : 'neutral monoisotopic mass (give --charge or --ion for an ion m/z)';
  const filters = flags.filters
    ? `filters: RDBE (${flags.electrons}-electron), SENIOR, Kind & Fiehn ratios and element counts`
    : 'no filters';
  println(io.stdout, `Searching ${formatElementRanges(flags.ranges)} within ${flags.ppm} ppm; ${filters}.`);
  for (const r of results) {
    println(io.stdout);
    println(io.stdout, `${r.mz} — ${what}`);
    if (r.formulas.length === 0) {
      println(io.stdout, '  no formula within tolerance');
      continue;
    }
    println(io.stdout, table(r.mz, r.formulas, flags.ion ? 'ion m/z' : flags.charge ? 'm/z' : 'mass'));
  }
  println(io.stdout);
  println(
    io.stdout,
    'Putative: a mass fits several formulas and a formula many structures; confirm with fragments and standards.',
  );
  return 0;
};

/** Fixed decimals without a minus sign on a value that rounds to zero. */
function fixed(x: number, digits: number): string {
  const s = x.toFixed(digits);
  return /^-0\.?0*$/.test(s) ? s.slice(1) : s;
}

function table(observed: number, rows: readonly Decomposition[], calcHeader: string): string {
  const head = ['#', 'formula', calcHeader, 'Δ mDa', 'ppm', 'RDBE'];
  const body = rows.map((d, i) => [
    String(i + 1),
    formatFormula(d.formula),
    d.mz.toFixed(5),
    fixed((observed - d.mz) * 1000, 2),
    fixed(d.ppm, 2),
    String(d.rdbe),
  ]);
  const widths = head.map((h, j) => Math.max(h.length, ...body.map((row) => row[j]!.length)));
  const line = (cells: string[]): string =>
    '  ' + cells.map((c, j) => (j === 1 ? c.padEnd(widths[j]!) : c.padStart(widths[j]!))).join('  ');
  return [line(head), ...body.map(line)].join('\n');
}
