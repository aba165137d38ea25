import type { Writable } from 'node:stream';

/** Options of {@link createDemoProgress}. */
export interface DemoProgressOptions {
  /** Where progress goes (stderr: stdout carries the summary). */
  stream: Writable;
  /** A live bar redrawn in place (a terminal); otherwise a plain line at each quarter. */
  tty: boolean;
  /** Milliseconds clock. @defaultValue `performance.now` */
  now?: () => number;
  /** Least time between two redraws of the bar, ms. @defaultValue 80 */
  intervalMs?: number;
}

/** Counts shown beside the bar. */
export interface DemoProgressCounts {
  done: number;
  total: number;
  annotated?: number;
  unassigned?: number;
  errors?: number;
}

/** A progress display for the demo: one bar on a terminal, a few plain lines elsewhere. */
export interface DemoProgress {
  update(counts: DemoProgressCounts, state?: string): void;
  /** Clears the bar (on a terminal) so other lines can be written. */
  clear(): void;
}

const BAR = 20;

/** Creates the demo's progress display (see {@link DemoProgressOptions}). */
export function createDemoProgress(o: DemoProgressOptions): DemoProgress {
  const now = o.now ?? (() => performance.now());
  const interval = o.intervalMs ?? 80;
  let last = Number.NEGATIVE_INFINITY;
  let drawn = false;
  let quarter = -1;
  const text = (c: DemoProgressCounts, state: string | undefined, bar: boolean) => {
    const frac = c.total > 0 ? Math.min(1, c.done / c.total) : 0;
    const pct = `${String(Math.floor(frac * 100)).padStart(3)}%`;
    const counts = [
      `${c.done}/${c.total} spectra`,
      c.annotated !== undefined ? `${c.annotated} annotated` : undefined,
      c.unassigned !== undefined ? `${c.unassigned} unassigned` : undefined,
      c.errors ? `${c.errors} error${c.errors === 1 ? '' : 's'}` : undefined,
      state,
    ].filter((x) => x !== undefined);
    if (!bar) return `  ${pct} ${counts.join(' · ')}`;
    const full = Math.round(frac * BAR);
    return `  [${'#'.repeat(full)}${'-'.repeat(BAR - full)}] ${pct} ${counts.join(' · ')}`;
  };
  return {
    update(c, state) {
      const complete = c.total > 0 && c.done >= c.total;
      if (o.tty) {
        const t = now();
        if (!complete && t - last < interval) return;
        last = t;
        const width = ((o.stream as { columns?: number }).columns || 100) - 1;
        o.stream.write(`\r\x1b[K${text(c, state, true).slice(0, width)}`);
        drawn = true;
        return;
      }
      const q = c.total > 0 ? Math.floor((Math.min(c.done, c.total) / c.total) * 4) : 0;
      if (q <= quarter) return;
      quarter = q;
      o.stream.write(`${text(c, state, false)}\n`);
    },
    clear() {
      if (drawn) o.stream.write('\r\x1b[K');
      drawn = false;
    },
  };
}
