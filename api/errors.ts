import type { z } from 'zod';

/** Stable codes of the problems the API reports; each has one HTTP status and title. */
export const PROBLEMS = {
  'bad-request': [400, 'Bad request'],
  'malformed-json': [400, 'Malformed JSON'],
  'bad-idempotency-key': [400, 'Invalid Idempotency-Key header'],
  'missing-file': [400, 'No file in the upload'],
  unauthorized: [401, 'Authentication required'],
  forbidden: [403, 'Not allowed'],
  'not-found': [404, 'Not found'],
  'not-acceptable': [406, 'Not acceptable'],
  'idempotency-key-in-flight': [409, 'A request with this Idempotency-Key is still being processed'],
  'batch-finished': [409, 'The batch has already finished'],
  'payload-too-large': [413, 'Payload too large'],
  'unsupported-media-type': [415, 'Unsupported media type'],
  'validation-failed': [422, 'The request is not valid'],
  'idempotency-key-reused': [422, 'Idempotency-Key reused with a different request'],
  'no-spectra': [422, 'No spectrum could be read'],
  'unknown-ruleset': [422, 'Unknown rule set'],
  'invalid-ruleset': [422, 'The rule set is not valid'],
  'rate-limited': [429, 'Too many requests'],
  internal: [500, 'Internal server error'],
  'store-unavailable': [503, 'Storage unavailable'],
} as const satisfies Record<string, readonly [number, string]>;

/** A problem code. */
export type ProblemCode = keyof typeof PROBLEMS;

/** A field-level problem: where (RFC 6901 JSON pointer into the request body or query) and what. */
export interface FieldProblem {
  /** JSON pointer into a JSON body (absent for problems in an uploaded file). */
  pointer?: string;
  detail: string;
  code?: string;
  /** Line of an uploaded file. */
  line?: number;
  /** 0-based index of the spectrum in the input. */
  index?: number;
}

/**
 * An error the API reports to its client as RFC 9457 problem details. Classified by `code` (its `name` is
 * literal, so the error middleware never needs `instanceof`).
 */
export class ApiError extends Error {
  override readonly name = 'ApiError' as const;
  readonly errors: FieldProblem[] | undefined;
  readonly headers: Record<string, string> | undefined;
  constructor(
    readonly code: ProblemCode,
    detail: string,
    extra: { errors?: FieldProblem[]; headers?: Record<string, string>; cause?: unknown } = {},
  ) {
    super(detail, extra.cause !== undefined ? { cause: extra.cause } : undefined);
    this.errors = extra.errors;
    this.headers = extra.headers;
  }
}

/** An RFC 6901 JSON pointer from a path of keys. */
export function jsonPointer(path: ReadonlyArray<PropertyKey>): string {
  return path.map((p) => `/${String(p).replace(/~/g, '~0').replace(/\//g, '~1')}`).join('');
}

/** Field problems from zod issues, under a base pointer (e.g. `/spectra/3`). */
export function zodProblems(error: z.ZodError, base: ReadonlyArray<PropertyKey> = []): FieldProblem[] {
  return error.issues.map((i) => ({
    pointer: jsonPointer([...base, ...i.path]),
    detail: i.message,
    code: i.code,
  }));
}

/** A 422 from a zod error. */
export function validationError(
  error: z.ZodError,
  detail: string,
  base: ReadonlyArray<PropertyKey> = [],
): ApiError {
  return new ApiError('validation-failed', detail, { errors: zodProblems(error, base) });
}
