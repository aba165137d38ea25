// The scoring processor as BullMQ runs it: in a worker thread of its own (`useWorkerThreads`), so CPU-bound
// scoring never blocks the main thread's lock renewal. Settings arrive as `workerData` from the entry point.
import { compileRuleSet, scoreSpectrum } from '../engine/index.js';
import { sandboxProcessor } from './sandbox-processor.js';

/** Processes one scoring job with Peel's engine (BullMQ calls the default export). */
export default sandboxProcessor({ compileRuleSet, scoreSpectrum });
