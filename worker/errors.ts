import { UnrecoverableError } from 'bullmq';

/**
 * A job that can never succeed (its rule set or batch data is gone). BullMQ recognises the name
 * `UnrecoverableError` and fails the job without further attempts; `code` says why.
 */
export function unrecoverable(code: string, message: string): UnrecoverableError {
  return Object.assign(new UnrecoverableError(`${code}: ${message}`), { code });
}
