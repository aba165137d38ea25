import { SpectrumSchema } from '../../../engine/spectrum/spectrum.js';
import type { ReadItem } from '../../../formats/read-types.js';

/** Every item a reader yields. */
export async function collect(gen: AsyncIterable<ReadItem>): Promise<ReadItem[]> {
  const items: ReadItem[] = [];
  for await (const item of gen) items.push(item);
  return items;
}

/** The input cut into small buffers, so that every token, line and multi-byte character crosses a chunk edge somewhere. */
export async function* chunked(input: string | Buffer, size = 7): AsyncGenerator<Buffer> {
  const buf = typeof input === 'string' ? Buffer.from(input) : input;
  for (let i = 0; i < buf.length; i += size) yield buf.subarray(i, i + size);
}

export type SpectrumItem = Extract<ReadItem, { kind: 'spectrum' }>;
export type ErrorItem = Extract<ReadItem, { kind: 'error' }>;

export const spectra = (items: ReadItem[]) => items.filter((i): i is SpectrumItem => i.kind === 'spectrum');
export const errors = (items: ReadItem[]) => items.filter((i): i is ErrorItem => i.kind === 'error');

/** Fails unless every spectrum a reader yields is valid by the one spectrum schema, peaks sorted. */
export function expectSchemaValid(items: ReadItem[]): void {
  for (const item of spectra(items)) {
    const r = SpectrumSchema.safeParse(item.spectrum);
    if (!r.success) throw new Error(`spectrum ${item.spectrum.id} fails the schema: ${r.error.message}`);
    const p = item.spectrum.peaks;
    for (let i = 1; i < p.length; i++)
      if (p[i]![0] < p[i - 1]![0]) throw new Error(`peaks of ${item.spectrum.id} unsorted`);
  }
}

/** A seeded generator (mulberry32) for simulated test data. */
export { mulberry32 as rng } from '../../../bench/sim/prng.js';
