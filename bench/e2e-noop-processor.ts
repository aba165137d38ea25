// Benchmark stand-in for the engine: the whole scoring path (load chunk, cache, record results, progress)
// with an engine that does no chemistry, to measure what the service itself costs per spectrum.
import { sandboxProcessor } from '../worker/sandbox-processor.js';

export default sandboxProcessor({
  compileRuleSet: (rules) => ({ rules }) as never,
  scoreSpectrum: (s) => ({
    id: s.id,
    status: 'unassigned',
    reason: { code: 'bench-noop', message: 'benchmark stand-in: no scoring done' },
    candidates: [],
    cautions: [],
  }),
});
