import type { ErrorRequestHandler, Request, Response } from 'express';
import type { Logger } from 'pino';
import { ApiError, type FieldProblem, PROBLEMS, type ProblemCode } from './errors.js';

/** The media type of problem details (RFC 9457). */
export const PROBLEM_JSON = 'application/problem+json';

/** An RFC 9457 problem details object, with Peel's `code` and field-level `errors`. */
export interface ProblemDetails {
  type: string;
  title: string;
  status: number;
  detail: string;
  instance: string;
  code: ProblemCode;
  requestId?: string;
  errors?: FieldProblem[];
}

/** The `type` URI of a problem code. */
export function problemType(code: ProblemCode): string {
  return `urn:peel:problem:${code}`;
}

/** Builds problem details for a code. */
export function problem(
  req: Request,
  code: ProblemCode,
  detail: string,
  errors?: FieldProblem[],
): ProblemDetails {
  const [status, title] = PROBLEMS[code];
  return {
    type: problemType(code),
    title,
    status,
    detail,
    instance: req.originalUrl.split('?')[0] ?? req.originalUrl,
    code,
    ...(req.id ? { requestId: String(req.id) } : {}),
    ...(errors && errors.length > 0 ? { errors } : {}),
  };
}

/** Sends problem details. */
export function sendProblem(
  req: Request,
  res: Response,
  code: ProblemCode,
  detail: string,
  errors?: FieldProblem[],
): void {
  const body = problem(req, code, detail, errors);
  res.status(body.status).type(PROBLEM_JSON).send(JSON.stringify(body));
}

/** Known errors from the body parsers and Redis, translated by their stable `type`/`code`/`name`. */
function classify(err: unknown): ApiError | null {
  if (!err || typeof err !== 'object') return null;
  const e = err as { name?: string; code?: unknown; type?: string; status?: number; message?: string };
  if (e.name === 'ApiError') return err as ApiError;
  switch (e.type) {
    case 'entity.too.large':
      return new ApiError('payload-too-large', 'the request body is larger than this endpoint accepts');
    case 'entity.parse.failed':
      return new ApiError('malformed-json', 'the request body is not valid JSON');
    case 'encoding.unsupported':
    case 'charset.unsupported':
      return new ApiError('unsupported-media-type', 'unsupported content encoding or charset');
    case 'request.aborted':
      return new ApiError('bad-request', 'the request was aborted');
  }
  // ioredis: connection gone, offline queue disabled, or retries spent.
  if (
    e.name === 'MaxRetriesPerRequestError' ||
    e.code === 'store-unavailable' ||
    (typeof e.message === 'string' &&
      /Stream isn't writeable|Connection is closed|ECONNREFUSED/.test(e.message))
  ) {
    return new ApiError('store-unavailable', 'the queue and store (Redis) cannot be reached; retry later');
  }
  return null;
}

/**
 * The one error middleware: known errors become their problem details; anything else is logged with the
 * request id and answered with a bare 500 (no message, stack or internals).
 */
export function errorMiddleware(logger: Logger): ErrorRequestHandler {
  return (err, req, res, _next) => {
    const known = classify(err);
    const log = (req as { log?: Logger }).log ?? logger;
    if (res.headersSent) {
      log.error({ err }, 'error after the response started');
      res.destroy();
      return;
    }
    if (known) {
      if (known.code === 'store-unavailable') log.warn({ err }, 'store unavailable');
      if (known.headers) res.set(known.headers);
      sendProblem(req, res, known.code, known.message, known.errors);
      return;
    }
    log.error({ err }, 'unhandled error');
    sendProblem(req, res, 'internal', 'an unexpected error occurred; quote the request id when reporting it');
  };
}
