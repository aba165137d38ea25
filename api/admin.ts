import express, { Router } from 'express';
import { loadRuleSet } from '../engine/rules/load.js';
import { ruleSetSha256 } from '../formats/ruleset-file.js';
import { newWebhookSecret } from '../worker/webhook-signing.js';
import { principal, requireAdmin } from './auth.js';
import type { AppContext } from './context.js';
import { ApiError, validationError } from './errors.js';
import { WebhookInputSchema } from './schemas.js';

const RULESET_TYPES = [
  'application/json',
  'application/yaml',
  'application/x-yaml',
  'text/yaml',
  'text/plain',
];

/** `residues[2].formula` → `/residues/2/formula`. */
function pathToPointer(path: string): string {
  if (!path) return '';
  return `/${path
    .replace(/\[(\d+)\]/g, '.$1')
    .replace(/^\./, '')
    .split('.')
    .join('/')}`;
}

/** Rule-set routes: anyone may list them; uploading and activating need the admin role. */
export function ruleSetRoutes(ctx: AppContext): Router {
  const r = Router();
  r.get('/rulesets', async (_req, res) => {
    res.json(await ctx.store.listRuleSets());
  });

  r.post(
    '/rulesets',
    requireAdmin,
    express.text({ type: RULESET_TYPES, limit: ctx.limits.rulesetBody }),
    async (req, res) => {
      if (typeof req.body !== 'string' || req.body.length === 0) {
        throw new ApiError(
          'unsupported-media-type',
          `send the rule set as YAML or JSON (${RULESET_TYPES.join(', ')})`,
        );
      }
      const loaded = loadRuleSet(req.body);
      if (!loaded.value) {
        throw new ApiError('invalid-ruleset', `the rule set has ${loaded.errors.length} error(s)`, {
          errors: loaded.errors.slice(0, 100).map((e) => ({
            pointer: pathToPointer(e.path),
            detail: e.message,
            code: e.code,
            ...(e.line !== undefined ? { line: e.line } : {}),
          })),
        });
      }
      const sha = ruleSetSha256(loaded.value);
      const summary = await ctx.store.putRuleSet(sha, loaded.value);
      if (req.query.activate === 'true') await ctx.store.activateRuleSet(sha);
      res
        .status(201)
        .location(`/v1/rulesets/${sha}`)
        .json({
          ...summary,
          warnings: loaded.warnings.map((w) => ({ code: w.code, path: w.path, message: w.message })),
        });
    },
  );

  r.get('/rulesets/:sha256', async (req, res) => {
    const rules = /^[0-9a-f]{64}$/.test(req.params.sha256)
      ? await ctx.store.getRuleSet(req.params.sha256)
      : null;
    if (!rules) throw new ApiError('not-found', `no stored rule set ${req.params.sha256}`);
    res.json(rules);
  });

  r.post('/rulesets/:sha256/activate', requireAdmin, async (req, res) => {
    const sha = String(req.params.sha256);
    const s = /^[0-9a-f]{64}$/.test(sha) ? await ctx.store.ruleSetSummary(sha) : null;
    if (!s) throw new ApiError('not-found', `no stored rule set ${sha}`);
    await ctx.store.activateRuleSet(s.sha256);
    res.json(await ctx.store.listRuleSets());
  });
  return r;
}

/** The calling client's webhook endpoint. */
export function webhookRoutes(ctx: AppContext): Router {
  const r = Router();
  r.put('/webhook', express.json({ limit: '16kb' }), async (req, res) => {
    const body = WebhookInputSchema.safeParse(req.body);
    if (!body.success) throw validationError(body.error, 'invalid webhook endpoint');
    if (!ctx.limits.webhookAllowHttp && !body.data.url.startsWith('https://')) {
      throw new ApiError('validation-failed', 'webhook URLs must use https', {
        errors: [{ pointer: '/url', detail: 'must start with https://' }],
      });
    }
    const ep = await ctx.store.setWebhook(
      principal(req).clientId,
      body.data.url,
      newWebhookSecret,
      body.data.rotateSecret,
    );
    res.json(ep);
  });
  r.get('/webhook', async (req, res) => {
    const ep = await ctx.store.getWebhook(principal(req).clientId);
    if (!ep) throw new ApiError('not-found', 'no webhook endpoint is registered');
    res.json(ep);
  });
  r.delete('/webhook', async (req, res) => {
    if (!(await ctx.store.deleteWebhook(principal(req).clientId))) {
      throw new ApiError('not-found', 'no webhook endpoint is registered');
    }
    res.status(204).end();
  });
  return r;
}
