import type { Writable } from 'node:stream';

/** Counts a long command reports as it goes. */
export interface ProgressCounts {
  /** Spectra done (scored or recorded as errors). */
  done: number;
  annotated: number;
  unassigned: number;
  errors: number;
}

/** Options of {@link createProgress}. */
export interface ProgressOptions {
  /** Where the bar goes (stderr: stdout may carry the results). */
  stream: Writable;
  /** Draw a live bar (only on a terminal); otherwise stay silent until the summary. */
  tty: boolean;
  /** Milliseconds clock. @defaultValue `performance.now` */
  now?: () => number;
  /** Least time between two redraws, ms. @defaultValue 100 */
  intervalMs?: number;
  /** Width of the terminal. @defaultValue the stream's `columns`, else 80 */
  columns?: number;
}

/** A progress display: a bar redrawn in place on a terminal, nothing otherwise. */
export interface Progress {
  /** A new input file starts (`size` in bytes when known, for the bar). */
  file(name: string, ordinal: number, total: number, size?: number): void;
  /** Counts so far, and how many bytes of the current file were read; redraws at most every interval. */
  update(counts: ProgressCounts, bytesRead?: number): void;
  /** Clears the bar (if any) so that other lines can be written. */
  clear(): void;
  /** Seconds since the display was created. */
  elapsed(): number;
}

const fmt = (n: number) => Math.round(n).toLocaleString('en-US');

/** Creates a progress display (see {@link ProgressOptions}). */
export function createProgress(options: ProgressOptions): Progress {
  const now = options.now ?? (() => performance.now());
  const interval = options.intervalMs ?? 100;
  const t0 = now();
  let last = Number.NEGATIVE_INFINITY;
  let drawn = false;
  let current: { name: string; ordinal: number; total: number; size?: number } | undefined;
  const columns = () => options.columns ?? ((options.stream as { columns?: number }).columns || 80);

  const draw = (counts: ProgressCounts, bytesRead?: number) => {
    const seconds = Math.max(1e-3, (now() - t0) / 1000);
    const parts = [
      `${fmt(counts.done)} spectra`,
      `${fmt(counts.done / seconds)}/s`,
      `${fmt(counts.annotated)} annotated`,
      `${fmt(counts.errors)} error${counts.errors === 1 ? '' : 's'}`,
    ];
    let head = '';
    if (current) {
      const files = current.total > 1 ? ` ${current.ordinal}/${current.total}` : '';
      if (current.size && bytesRead !== undefined) {
        const frac = Math.min(1, bytesRead / current.size);
        const barWidth = 20;
        const full = Math.round(frac * barWidth);
        head = `[${'#'.repeat(full)}${'-'.repeat(barWidth - full)}] ${String(Math.floor(frac * 100)).padStart(3)}%${files} `;
      } else if (files) head = `file${files} `;
    }
    if (current && current.total > 1) parts.push(current.name);
    let text = `${head}${parts.join(' · ')}`;
    const width = columns() - 1;
    if (text.length > width) text = text.slice(0, Math.max(0, width));
    options.stream.write(`\r\x1b[K${text}`);
    drawn = true;
  };

  return {
    file(name, ordinal, total, size) {
      current = { name, ordinal, total, ...(size !== undefined ? { size } : {}) };
      last = Number.NEGATIVE_INFINITY;
    },
    update(counts, bytesRead) {
      if (!options.tty) return;
      const t = now();
      if (t - last < interval) return;
      last = t;
      draw(counts, bytesRead);
    },
    clear() {
      if (drawn) options.stream.write('\r\x1b[K');
      drawn = false;
    },
    elapsed() {
      return (now() - t0) / 1000;
    },
  };
}
