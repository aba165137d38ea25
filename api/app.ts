import { randomUUID } from 'node:crypto';
import express, { type Express, type Request } from 'express';
import helmet from 'helmet';
import { pinoHttp } from 'pino-http';
import { peelVersion } from '../formats/package-root.js';
import { ruleSetRoutes, webhookRoutes } from './admin.js';
import { authenticate } from './auth.js';
import { batchRoutes } from './batches.js';
import { type AppContext, type AppDeps, DEFAULT_LIMITS } from './context.js';
import { errorMiddleware, sendProblem } from './problem.js';
import { clientRateLimit } from './rate-limit.js';
import { resultRoutes } from './results.js';
import { openApiDocument } from './openapi.js';

const REQUEST_ID = /^[A-Za-z0-9._:-]{1,128}$/;

/**
 * Builds the HTTP API (not yet listening): security headers, request ids and logs, metrics, health
 * endpoints, the OpenAPI document, and the authenticated, rate-limited `/v1` routes; every error leaves as
 * RFC 9457 problem details.
 */
export function createApp(deps: AppDeps): Express {
  const ctx: AppContext = { ...deps, limits: { ...DEFAULT_LIMITS, ...deps.limits } };
  const app = express();
  app.disable('x-powered-by');
  app.set('query parser', 'extended');
  app.use(helmet());
  app.use(
    pinoHttp({
      logger: deps.logger,
      genReqId(req, res) {
        const given = req.headers['x-request-id'];
        const id = typeof given === 'string' && REQUEST_ID.test(given) ? given : randomUUID();
        res.setHeader('X-Request-Id', id);
        return id;
      },
      customAttributeKeys: { reqId: 'requestId' },
      // Every line logged through req.log carries the request id as `requestId`.
      quietReqLogger: true,
      // No headers in logs: they carry API keys.
      serializers: {
        req: (req: { id: unknown; method: string; url: string }) => ({
          id: req.id,
          method: req.method,
          url: req.url,
        }),
        res: (res: { statusCode: number }) => ({ statusCode: res.statusCode }),
      },
      customLogLevel: (_req, res, err) =>
        err || res.statusCode >= 500 ? 'error' : res.statusCode >= 400 ? 'info' : 'debug',
    }),
  );
  if (ctx.metrics) {
    const m = ctx.metrics;
    app.use((req, res, next) => {
      const end = m.httpDuration.startTimer();
      res.on('finish', () => {
        const route = routeLabel(req);
        m.httpRequests.inc({ method: req.method, route, status: String(res.statusCode) });
        end({ method: req.method, route });
      });
      next();
    });
  }

  app.get('/livez', (_req, res) => {
    res.json({ status: 'ok' });
  });
  app.get('/readyz', async (req, res) => {
    try {
      await (ctx.ready ?? (() => ctx.store.redis.ping().then(() => {})))();
      res.json({ status: 'ready' });
    } catch {
      sendProblem(req, res, 'store-unavailable', 'Redis is not reachable');
    }
  });
  app.get('/metrics', async (_req, res) => {
    if (!ctx.metrics) {
      res.status(404).end();
      return;
    }
    res.type(ctx.metrics.registry.contentType).send(await ctx.metrics.registry.metrics());
  });
  const doc = JSON.stringify(openApiDocument(peelVersion()));
  app.get('/openapi.json', (_req, res) => {
    res.type('application/json').send(doc);
  });

  const v1 = express.Router();
  v1.use(authenticate(ctx.apiKeys));
  v1.use(clientRateLimit(ctx.store.redis, ctx.store.keys, ctx.limits.ratePerMinute));
  v1.use(batchRoutes(ctx));
  v1.use(resultRoutes(ctx));
  v1.use(ruleSetRoutes(ctx));
  v1.use(webhookRoutes(ctx));
  app.use('/v1', v1);

  app.use((req, res) => sendProblem(req, res, 'not-found', `no route ${req.method} ${req.path}`));
  app.use(errorMiddleware(deps.logger));
  return app;
}

/** The route pattern of a request for metric labels (never the raw URL: ids would explode cardinality). */
function routeLabel(req: Request): string {
  const path = (req.route as { path?: string } | undefined)?.path;
  return path ? `${req.baseUrl}${path}` : 'unmatched';
}
