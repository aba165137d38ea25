import type { SpectrumResult } from '../engine/report/result.js';
import type { RuleSet } from '../engine/rules/schema.js';
import type { CompiledRuleSet, ScoreOptions } from '../engine/index.js';
import type { Spectrum } from '../engine/spectrum/spectrum.js';
import { scoringKey } from '../store/hash.js';
import { isTerminal, type IndexedResult, type Store } from '../store/store.js';
import { unrecoverable } from './errors.js';
import type { ScoreJobData, ScoreJobResult } from './queues.js';

/** The engine entry points the processor calls (the real ones, or a stand-in in a test). */
export interface ScoringEngine {
  compileRuleSet(rules: RuleSet): CompiledRuleSet;
  scoreSpectrum(spectrum: Spectrum, compiled: CompiledRuleSet, options?: ScoreOptions): SpectrumResult;
}

/** The part of a BullMQ job (plain or sandboxed) the processor uses. */
export interface ChunkJob {
  data: ScoreJobData;
  attemptsMade: number;
  updateProgress(value: number): Promise<void>;
}

/** Dependencies of {@link createProcessor}. */
export interface ProcessorDeps {
  store: Store;
  engine: ScoringEngine;
  /** Part of every result-cache key, so a new engine never serves an old engine's results. */
  engineVersion: string;
  /** How long computed results are cached for reuse, seconds (0: no cache). @defaultValue 30 days */
  cacheTtlSeconds?: number;
  /** Called when a batch has just finished (and again if a retried job finds it finished). */
  onBatchFinished?: (batchId: string, state: string) => Promise<void>;
  /** Compiled rule sets kept in memory. @defaultValue 4 */
  ruleSetCacheSize?: number;
}

/**
 * Builds the scoring job processor: loads one chunk of a batch by reference, serves what it can from the
 * result cache, scores the rest, and records every result once. A spectrum the engine throws on becomes an
 * error result for that spectrum; a missing batch or rule set fails the job without retries.
 */
export function createProcessor(deps: ProcessorDeps): (job: ChunkJob) => Promise<ScoreJobResult> {
  const { store, engine } = deps;
  const ttl = deps.cacheTtlSeconds ?? 30 * 86_400;
  const compiled = new Map<string, CompiledRuleSet>();
  const maxCompiled = deps.ruleSetCacheSize ?? 4;

  async function rulesFor(sha256: string): Promise<CompiledRuleSet> {
    const hit = compiled.get(sha256);
    if (hit) return hit;
    const rules = await store.getRuleSet(sha256);
    if (!rules) throw unrecoverable('ruleset-missing', `rule set ${sha256} is not stored`);
    const c = engine.compileRuleSet(rules);
    if (compiled.size >= maxCompiled) compiled.delete(compiled.keys().next().value!);
    compiled.set(sha256, c);
    return c;
  }

  return async function processChunk(job: ChunkJob): Promise<ScoreJobResult> {
    const t0 = performance.now();
    const { batchId, start, end } = job.data;
    const out: ScoreJobResult = {
      scored: 0,
      cached: 0,
      skipped: 0,
      byStatus: { computed: {}, cached: {} },
      finished: null,
      durationMs: 0,
    };
    const batch = await store.getBatch(batchId);
    if (!batch || batch.state === 'cancelled') {
      out.skipped = end - start + 1;
      return out;
    }
    const items = await store.getItems(batchId, start, end);
    const done = await store.doneIndexes(
      batchId,
      items.map((i) => i.index),
    );
    const todo = items.filter((i) => i.hash !== null && !done.has(i.index));
    out.skipped = items.length - todo.length;

    const results: IndexedResult[] = [];
    if (todo.length > 0) {
      const compiledRules = await rulesFor(batch.ruleset.sha256);
      const options: ScoreOptions = {
        ...(batch.options.tolerance?.fragmentPpm !== undefined
          ? { fragmentPpm: batch.options.tolerance.fragmentPpm }
          : {}),
        ...(batch.options.tolerance?.precursorPpm !== undefined
          ? { precursorPpm: batch.options.tolerance.precursorPpm }
          : {}),
        ...(batch.options.candidates ? { candidates: batch.options.candidates } : {}),
      };
      const key = scoringKey({
        rulesetSha256: batch.ruleset.sha256,
        options,
        engineVersion: deps.engineVersion,
      });
      const hashes = todo.map((i) => i.hash!);
      const [spectra, cached] = await Promise.all([
        store.getSpectra(hashes),
        store.getCachedResults(key, hashes),
      ]);
      const fresh: Array<{ hash: string; result: SpectrumResult }> = [];
      for (let k = 0; k < todo.length; k++) {
        const item = todo[k]!;
        let result = cached[k];
        const origin = result ? 'cached' : 'computed';
        if (result) {
          out.cached++;
        } else {
          const spectrum = spectra[k];
          if (!spectrum) {
            result = errorResult(item.id, 'spectrum-missing', 'the stored spectrum is gone; submit it again');
          } else {
            try {
              result = engine.scoreSpectrum(spectrum, compiledRules, options);
              fresh.push({ hash: item.hash!, result });
            } catch {
              // The engine promises not to throw for bad data; if it does, this spectrum alone fails.
              result = errorResult(item.id, 'engine-error', 'the scoring engine failed on this spectrum');
            }
          }
          out.scored++;
        }
        const final = { ...result, id: item.id, index: item.index };
        out.byStatus[origin][final.status] = (out.byStatus[origin][final.status] ?? 0) + 1;
        results.push({ index: item.index, result: final });
      }
      await store.cacheResults(key, fresh, ttl);
    }

    const outcome = await store.markResults(batchId, results);
    if (outcome.finished || (job.attemptsMade > 0 && outcome.state && isTerminal(outcome.state))) {
      out.finished = outcome.state;
      await deps.onBatchFinished?.(batchId, outcome.state!);
    }
    await job.updateProgress(100);
    out.durationMs = performance.now() - t0;
    return out;
  };
}

/** An error result for one spectrum. */
export function errorResult(id: string, code: string, message: string): SpectrumResult {
  return { id, status: 'error', reason: { code, message }, candidates: [], cautions: [] };
}
