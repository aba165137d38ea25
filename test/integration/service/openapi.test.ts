import { Validator } from '@seriousme/openapi-schema-validator';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestRedis, type TestRedis, testPrefix } from '../../helpers/redis.js';
import { startTestService, type TestService } from '../../helpers/service.js';

let redis: TestRedis;
let svc: TestService;
beforeAll(async () => {
  redis = await startTestRedis();
  svc = await startTestService({ url: redis.url, prefix: testPrefix('openapi'), workers: false });
});
afterAll(async () => {
  await svc?.close();
  await redis?.stop();
});

type Json = Record<string, unknown>;

/** Every `$ref` in a value, with where it sits. */
function refs(v: unknown, at = '#', out: Array<[string, string]> = []): Array<[string, string]> {
  if (Array.isArray(v)) {
    for (const [i, x] of v.entries()) refs(x, `${at}/${i}`, out);
  } else if (v && typeof v === 'object') {
    for (const [k, x] of Object.entries(v)) {
      if (k === '$ref' && typeof x === 'string') out.push([at, x]);
      else refs(x, `${at}/${k}`, out);
    }
  }
  return out;
}

function resolvePointer(doc: unknown, ref: string): unknown {
  if (!ref.startsWith('#/')) return undefined;
  return ref
    .slice(2)
    .split('/')
    .map((p) => p.replace(/~1/g, '/').replace(/~0/g, '~'))
    .reduce<unknown>(
      (node, key) => (node && typeof node === 'object' ? (node as Json)[key] : undefined),
      doc,
    );
}

// Structural checks of OpenAPI 3.1.0 (spec.openapis.org/oas/v3.1.0): required fields, operation shape,
// unique operationIds, path parameters declared, every $ref resolving, schemas as JSON Schema 2020-12 objects.
describe('OpenAPI document', () => {
  it('is a valid OpenAPI 3.1 document built from the zod schemas', async () => {
    const r = await request(svc.app).get('/openapi.json');
    expect(r.status).toBe(200);
    const doc = r.body as Json;
    expect(doc.openapi).toBe('3.1.0');
    // Against the OpenAPI Initiative's published 3.1 schema.
    const validator = new Validator();
    const res = await validator.validate(structuredClone(doc));
    expect(res.valid, JSON.stringify(res.errors)).toBe(true);
    expect(validator.version).toBe('3.1');
    expect(() => validator.resolveRefs()).not.toThrow();
    expect(doc.info).toMatchObject({ title: expect.any(String), version: expect.any(String) });
    const paths = doc.paths as Record<string, Record<string, Json>>;
    const ids = new Set<string>();
    const METHODS = ['get', 'put', 'post', 'delete', 'patch', 'head', 'options'];
    for (const [path, item] of Object.entries(paths)) {
      expect(path.startsWith('/')).toBe(true);
      const templated = [...path.matchAll(/\{([^}]+)\}/g)].map((m) => m[1]);
      for (const [method, op] of Object.entries(item)) {
        expect(METHODS).toContain(method);
        expect(typeof op.operationId).toBe('string');
        expect(ids.has(op.operationId as string)).toBe(false);
        ids.add(op.operationId as string);
        const responses = op.responses as Record<string, Json>;
        expect(Object.keys(responses).length).toBeGreaterThan(0);
        for (const [code, resp] of Object.entries(responses)) {
          expect(code).toMatch(/^[1-5]\d\d$|^default$/);
          expect(typeof resp.description).toBe('string');
        }
        const params = (op.parameters ?? []) as Json[];
        for (const p of params) {
          expect(['query', 'header', 'path', 'cookie']).toContain(p.in);
          if (p.in === 'path') expect(p.required).toBe(true);
        }
        for (const name of templated) {
          expect(params.some((p) => p.in === 'path' && p.name === name)).toBe(true);
        }
      }
    }
    const all = refs(doc);
    expect(all.length).toBeGreaterThan(20);
    for (const [at, ref] of all) {
      expect(resolvePointer(doc, ref), `${at} → ${ref}`).toBeTypeOf('object');
    }
    const schemas = (doc.components as Json).schemas as Record<string, Json>;
    for (const [name, s] of Object.entries(schemas)) {
      expect(s.$schema, name).toBeUndefined();
      expect(
        ['object', 'array'].includes(s.type as string) || 'anyOf' in s || 'oneOf' in s || 'allOf' in s,
        name,
      ).toBe(true);
    }
    // The results contract and the spectrum schema come from the engine's own zod schemas.
    expect((schemas.SpectrumResult!.properties as Json).status).toMatchObject({
      enum: ['annotated', 'unassigned', 'error'],
    });
    expect(schemas.Spectrum!.required).toEqual(expect.arrayContaining(['id', 'precursor', 'peaks']));
    expect(((schemas.SubmitBatch!.properties as Json).spectra as Json).items).toBeTypeOf('object');
  });
});
