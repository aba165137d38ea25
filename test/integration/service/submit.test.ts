import { readFileSync } from 'node:fs';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ResultsDocumentSchema, SpectrumResultSchema } from '../../../engine/report/result.js';
import { BatchStatusSchema } from '../../../store/schemas.js';
import { startTestRedis, type TestRedis, testPrefix } from '../../helpers/redis.js';
import {
  auth,
  simulatedSpectrum,
  startTestService,
  type TestService,
  waitFor,
} from '../../helpers/service.js';

// Simulated spectra (not measurements). These tests check the service around the engine: every spectrum
// accepted is scored exactly once, each result carries a status, and every document has a valid shape.

let redis: TestRedis;
let svc: TestService;
const LIMIT = 256 * 1024;

beforeAll(async () => {
  redis = await startTestRedis();
  svc = await startTestService({
    url: redis.url,
    prefix: testPrefix('submit'),
    limits: { jsonBody: LIMIT, uploadBody: LIMIT },
  });
});
afterAll(async () => {
  await svc?.close();
  await redis?.stop();
});

type Who = 'alpha' | 'beta';

async function finished(id: string, who: Who = 'alpha') {
  return waitFor(async () => {
    const r = await request(svc.app).get(`/v1/batches/${id}`).set(auth(who));
    return ['completed', 'failed', 'cancelled'].includes(r.body.state) ? r.body : null;
  });
}

async function results(id: string, who: Who = 'alpha') {
  const r = await request(svc.app).get(`/v1/batches/${id}/results`).set(auth(who));
  expect(r.status).toBe(200);
  return r;
}

function expectProblem(r: request.Response, status: number, code: string) {
  expect(r.status).toBe(status);
  expect(r.headers['content-type']).toMatch(/^application\/problem\+json/);
  expect(r.body).toMatchObject({ status, code, type: `urn:peel:problem:${code}` });
  expect(typeof r.body.title).toBe('string');
  expect(typeof r.body.detail).toBe('string');
  expect(typeof r.body.instance).toBe('string');
  expect(JSON.stringify(r.body)).not.toMatch(/at .+\.(ts|js):\d+/); // no stack traces
}

const MGF = `BEGIN IONS
TITLE=sim-a
PEPMASS=449.10784
CHARGE=1+
287.05501 1000
449.10784 120
END IONS
BEGIN IONS
TITLE=sim-b
PEPMASS=611.16066
CHARGE=1+
287.05501 800
449.10784 300
465.10275 50
END IONS
BEGIN IONS
TITLE=sim-c
PEPMASS=433.11292
CHARGE=1+
271.06010 500
END IONS
`;

const MIXED_MGF = `BEGIN IONS
TITLE=good-1
PEPMASS=449.10784
287.05501 100
END IONS
BEGIN IONS
TITLE=bad-peak
PEPMASS=449.10784
NaN 100
END IONS
BEGIN IONS
TITLE=no-precursor
287.05501 100
END IONS
BEGIN IONS
TITLE=good-2
PEPMASS=611.16066
287.05501 100
449.10784 30
END IONS
`;

describe('submit → poll → results', () => {
  let jsonBatch: string;
  const spectra = Array.from({ length: 23 }, (_, i) => simulatedSpectrum(`S${i}`, i));

  it('JSON body: every spectrum exactly once, in order, valid shapes; reads back identically', async () => {
    const sub = await request(svc.app).post('/v1/batches').set(auth('alpha')).send({ spectra });
    expect(sub.status).toBe(202);
    jsonBatch = sub.body.id;
    expect(sub.headers.location).toBe(`/v1/batches/${jsonBatch}`);
    expect(BatchStatusSchema.safeParse(sub.body).success).toBe(true);
    expect(sub.body.source).toEqual({ kind: 'json' });
    const done = await finished(jsonBatch);
    expect(done).toMatchObject({ state: 'completed', total: 23, processed: 23, progress: 1 });
    const c = done.counts;
    expect(c.pending + c.annotated + c.unassigned + c.error).toBe(23);
    expect(c.pending).toBe(0);
    const a = await results(jsonBatch);
    expect(ResultsDocumentSchema.safeParse(a.body).success).toBe(true);
    expect(a.body.spectra.map((s: { id: string }) => s.id)).toEqual(spectra.map((s) => s.id));
    expect(a.body.spectra.map((s: { index: number }) => s.index)).toEqual(spectra.map((_, i) => i));
    expect(a.body.ruleset.sha256).toBe(svc.rulesetSha);
    expect(a.body.disclaimer).toMatch(/[Pp]utative/);
    const b = await results(jsonBatch);
    expect(b.text).toBe(a.text);
  });

  it('one spectrum by index, with the result contract', async () => {
    const r = await request(svc.app).get(`/v1/batches/${jsonBatch}/results/4`).set(auth('alpha'));
    expect(r.status).toBe(200);
    expect(SpectrumResultSchema.parse(r.body)).toMatchObject({ id: 'S4', index: 4 });
    expectProblem(
      await request(svc.app).get(`/v1/batches/${jsonBatch}/results/23`).set(auth('alpha')),
      404,
      'not-found',
    );
    expectProblem(
      await request(svc.app).get(`/v1/batches/${jsonBatch}/results/x`).set(auth('alpha')),
      404,
      'not-found',
    );
  });

  it('NDJSON, CSV and mzTab-M by ?format= and by Accept; 406 when nothing fits', async () => {
    const nd = await request(svc.app)
      .get(`/v1/batches/${jsonBatch}/results?format=ndjson`)
      .set(auth('alpha'));
    expect(nd.status).toBe(200);
    expect(nd.headers['content-type']).toMatch(/application\/x-ndjson/);
    const lines = nd.text
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l));
    const spectraLines = lines.filter((l) => l.type === 'spectrum');
    expect(spectraLines.map((l) => l.id)).toEqual(spectra.map((s) => s.id));
    const nd2 = await request(svc.app)
      .get(`/v1/batches/${jsonBatch}/results`)
      .set(auth('alpha'))
      .set('Accept', 'application/x-ndjson');
    expect(nd2.text).toBe(nd.text);

    const csv = await request(svc.app)
      .get(`/v1/batches/${jsonBatch}/results`)
      .set(auth('alpha'))
      .set('Accept', 'text/csv');
    expect(csv.status).toBe(200);
    expect(csv.headers['content-type']).toMatch(/text\/csv/);
    for (const s of spectra) expect(csv.text).toContain(s.id);

    const mz = await request(svc.app).get(`/v1/batches/${jsonBatch}/results?format=mztab`).set(auth('alpha'));
    expect(mz.status).toBe(200);
    expect(mz.text).toMatch(/^MTD\tmzTab-version\t2\.0\.0-M/m);

    expectProblem(
      await request(svc.app)
        .get(`/v1/batches/${jsonBatch}/results`)
        .set(auth('alpha'))
        .set('Accept', 'image/png'),
      406,
      'not-acceptable',
    );
    expectProblem(
      await request(svc.app).get(`/v1/batches/${jsonBatch}/results?format=xls`).set(auth('alpha')),
      422,
      'validation-failed',
    );
  });

  it('filters by status and confidence, and pages with a cursor', async () => {
    const all = (await results(jsonBatch)).body.spectra as Array<{ status: string; index: number }>;
    for (const status of ['annotated', 'unassigned', 'error']) {
      const r = await request(svc.app)
        .get(`/v1/batches/${jsonBatch}/results?status=${status}`)
        .set(auth('alpha'));
      expect(r.body.spectra.map((s: { index: number }) => s.index)).toEqual(
        all.filter((s) => s.status === status).map((s) => s.index),
      );
    }
    const lvl = await request(svc.app)
      .get(`/v1/batches/${jsonBatch}/results?maxConfidenceLevel=3`)
      .set(auth('alpha'));
    for (const s of lvl.body.spectra) expect(s.candidates[0].confidenceLevel).toBeLessThanOrEqual(3);

    const seen: number[] = [];
    let cursor: number | null = 0;
    let pages = 0;
    while (cursor !== null) {
      const p: request.Response = await request(svc.app)
        .get(`/v1/batches/${jsonBatch}/results?limit=10&cursor=${cursor}`)
        .set(auth('alpha'));
      expect(p.status).toBe(200);
      seen.push(...p.body.spectra.map((s: { index: number }) => s.index));
      cursor = p.body.page.next;
      if (cursor !== null) expect(p.headers.link).toContain(`cursor=${cursor}`);
      pages++;
    }
    expect(pages).toBe(3);
    expect(seen).toEqual(all.map((s) => s.index));
  });

  it('identical spectra submitted again are served from the result cache', async () => {
    const before = (await svc.metrics.spectraProcessed.get()).values
      .filter((v) => v.labels.origin === 'cached')
      .reduce((a, v) => a + v.value, 0);
    const sub = await request(svc.app).post('/v1/batches').set(auth('beta')).send({ spectra });
    await finished(sub.body.id, 'beta');
    const after = (await svc.metrics.spectraProcessed.get()).values
      .filter((v) => v.labels.origin === 'cached')
      .reduce((a, v) => a + v.value, 0);
    expect(after - before).toBe(23);
    const again = await results(sub.body.id, 'beta');
    expect(again.body.spectra.map((s: { id: string }) => s.id)).toEqual(spectra.map((s) => s.id));
  });

  it('MGF as a raw body', async () => {
    const sub = await request(svc.app)
      .post('/v1/batches?instrument=sim-qtof&fragmentPpm=8')
      .set(auth('alpha'))
      .set('Content-Type', 'application/x-mgf')
      .send(MGF);
    expect(sub.status).toBe(202);
    expect(sub.body.source.kind).toBe('mgf');
    expect(sub.body.metadata).toEqual({ instrument: 'sim-qtof' });
    expect(sub.body.options).toEqual({ tolerance: { fragmentPpm: 8 } });
    await finished(sub.body.id);
    const r = await results(sub.body.id);
    expect(r.body.spectra.map((s: { id: string }) => s.id)).toEqual(['sim-a', 'sim-b', 'sim-c']);
  });

  it('MGF as a multipart upload with an options field', async () => {
    const sub = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .field(
        'options',
        JSON.stringify({ metadata: { sampleIds: ['LIMS-0001'], instrument: 'sim-orbitrap' } }),
      )
      .attach('file', Buffer.from(MGF), { filename: 'run-01.mgf', contentType: 'application/octet-stream' });
    expect(sub.status).toBe(202);
    expect(sub.body.source).toEqual({ kind: 'mgf', filename: 'run-01.mgf' });
    expect(sub.body.metadata).toEqual({ sampleIds: ['LIMS-0001'], instrument: 'sim-orbitrap' });
    await finished(sub.body.id);
    const r = await results(sub.body.id);
    expect(r.body.spectra).toHaveLength(3);
  });

  it('mzML upload (the HUPO-PSI mzML 1.1 example file)', async () => {
    // test/fixtures/mzml/tiny.pwiz.1.1.mzML: the example published with the HUPO-PSI mzML 1.1 specification.
    const file = readFileSync('test/fixtures/mzml/tiny.pwiz.1.1.mzML');
    const sub = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Content-Type', 'application/mzml+xml')
      .send(file);
    expect(sub.status).toBe(202);
    expect(sub.body.source.kind).toBe('mzml');
    await finished(sub.body.id);
    const r = await results(sub.body.id);
    expect(r.body.spectra.map((s: { id: string }) => s.id)).toEqual(['scan=20']);
    const up = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .attach('file', file, { filename: 'tiny.pwiz.1.1.mzML' });
    expect(up.status).toBe(202);
    expect(up.body.source).toEqual({ kind: 'mzml', filename: 'tiny.pwiz.1.1.mzML' });
  });
});

describe('bad input', () => {
  it('a partly malformed MGF: the good spectra are scored, the bad ones become error results', async () => {
    const sub = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Content-Type', 'text/plain')
      .send(MIXED_MGF);
    expect(sub.status).toBe(202);
    expect(sub.body.readIssues.errors).toBe(2);
    const done = await finished(sub.body.id);
    expect(done.total).toBe(4);
    const r = await results(sub.body.id);
    const byId = Object.fromEntries(r.body.spectra.map((s: { id: string }) => [s.id, s]));
    expect(Object.keys(byId).sort()).toEqual(['bad-peak', 'good-1', 'good-2', 'no-precursor']);
    expect(byId['bad-peak'].status).toBe('error');
    expect(byId['bad-peak'].reason.code).not.toBe('not-implemented');
    expect(byId['no-precursor'].reason.code).toBe('missing-precursor');
    const issues = await request(svc.app).get(`/v1/batches/${sub.body.id}/issues`).set(auth('alpha'));
    expect(issues.body.issues.filter((i: { severity: string }) => i.severity === 'error')).toHaveLength(2);
    expect(issues.body.issues[0].position.line).toBeGreaterThan(0);
  });

  it('a file where nothing can be read is a 422 problem with positions', async () => {
    const bad = 'BEGIN IONS\nTITLE=x\n287.05501 100\nEND IONS\nBEGIN IONS\nTITLE=y\nPEPMASS=abc\nEND IONS\n';
    const r = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Content-Type', 'application/x-mgf')
      .send(bad);
    expectProblem(r, 422, 'no-spectra');
    expect(r.body.errors).toHaveLength(2);
    expect(r.body.errors[0].line).toBeGreaterThan(0);
    const junk = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Content-Type', 'application/octet-stream')
      .send(Buffer.from('this is not a spectrum file\n'));
    expectProblem(junk, 422, 'no-spectra');
  });

  it('JSON: an invalid spectrum becomes an error result with its JSON pointer; all invalid → 422', async () => {
    const good = simulatedSpectrum('ok-1', 3);
    const sub = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .send({ spectra: [good, { id: 'neg', precursor: { mz: -1 }, peaks: [] }] });
    expect(sub.status).toBe(202);
    await finished(sub.body.id);
    const r = await results(sub.body.id);
    expect(r.body.spectra[1]).toMatchObject({
      id: 'neg',
      status: 'error',
      reason: { code: 'invalid-spectrum' },
    });
    expect(r.body.spectra[1].reason.message).toContain('/spectra/1/precursor/mz');

    const none = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .send({ spectra: [{ id: 'a', precursor: { mz: 'x' }, peaks: [] }] });
    expectProblem(none, 422, 'no-spectra');
    expect(none.body.errors[0].pointer).toBe('/spectra/0/precursor/mz');
  });

  it('JSON envelope problems carry JSON pointers; malformed JSON is a 400', async () => {
    const r = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .send({ spectra: 'nope', tolerance: { fragmentPpm: -3 } });
    expectProblem(r, 422, 'validation-failed');
    const pointers = r.body.errors.map((e: { pointer: string }) => e.pointer).sort();
    expect(pointers).toEqual(['/spectra', '/tolerance/fragmentPpm']);
    const m = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Content-Type', 'application/json')
      .send('{"spectra": [');
    expectProblem(m, 400, 'malformed-json');
    const rs = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .send({ spectra: [simulatedSpectrum('x')], ruleset: 'f'.repeat(64) });
    expectProblem(rs, 422, 'unknown-ruleset');
  });

  it('bodies over the limit are 413 problems (JSON, raw and multipart)', async () => {
    const big = Array.from({ length: 3000 }, (_, i) => simulatedSpectrum(`big-${i}`, i));
    expectProblem(
      await request(svc.app).post('/v1/batches').set(auth('alpha')).send({ spectra: big }),
      413,
      'payload-too-large',
    );
    const bigMgf = MGF.repeat(Math.ceil((LIMIT * 1.5) / MGF.length));
    expectProblem(
      await request(svc.app)
        .post('/v1/batches')
        .set(auth('alpha'))
        .set('Content-Type', 'application/x-mgf')
        .send(bigMgf),
      413,
      'payload-too-large',
    );
    expectProblem(
      await request(svc.app)
        .post('/v1/batches')
        .set(auth('alpha'))
        .attach('file', Buffer.from(bigMgf), { filename: 'big.mgf' }),
      413,
      'payload-too-large',
    );
    // Nothing of the refused uploads is left behind as a batch.
    const list = await request(svc.app).get('/v1/batches?limit=200').set(auth('alpha'));
    expect(list.body.batches.every((b: { state: string }) => b.state !== 'receiving')).toBe(true);
  });

  it('unsupported content types are 415; a multipart form without a file is 400', async () => {
    expectProblem(
      await request(svc.app)
        .post('/v1/batches')
        .set(auth('alpha'))
        .set('Content-Type', 'image/png')
        .send(Buffer.from('x')),
      415,
      'unsupported-media-type',
    );
    expectProblem(
      await request(svc.app).post('/v1/batches').set(auth('alpha')).field('options', '{}'),
      400,
      'missing-file',
    );
  });
});

describe('auth and tenants', () => {
  let alphaBatch: string;
  beforeAll(async () => {
    const sub = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .send({ spectra: [simulatedSpectrum('t-1'), simulatedSpectrum('t-2', 2)] });
    alphaBatch = sub.body.id;
    await finished(alphaBatch);
  });

  it('no key, a malformed header or a wrong key is 401 with a Bearer challenge', async () => {
    for (const h of [undefined, 'Basic abc', 'Bearer pk_wrong_key_0000000000']) {
      const req = request(svc.app).get('/v1/batches');
      const r = await (h ? req.set('Authorization', h) : req);
      expectProblem(r, 401, 'unauthorized');
      expect(r.headers['www-authenticate']).toMatch(/^Bearer/);
    }
  });

  it("another client's batch is 404 on every endpoint, and absent from its list", async () => {
    const paths = [
      ['get', `/v1/batches/${alphaBatch}`],
      ['get', `/v1/batches/${alphaBatch}/results`],
      ['get', `/v1/batches/${alphaBatch}/results?format=csv`],
      ['get', `/v1/batches/${alphaBatch}/results/0`],
      ['get', `/v1/batches/${alphaBatch}/issues`],
      ['get', `/v1/batches/${alphaBatch}/webhook-deliveries`],
      ['get', `/v1/batches/${alphaBatch}/changes`],
      ['post', `/v1/batches/${alphaBatch}/cancel`],
    ] as const;
    for (const [method, path] of paths) {
      const r = await request(svc.app)[method](path).set(auth('beta'));
      expectProblem(r, 404, 'not-found');
      expect(r.body.detail).not.toContain('alpha');
    }
    const list = await request(svc.app).get('/v1/batches?limit=200').set(auth('beta'));
    expect(list.body.batches.map((b: { id: string }) => b.id)).not.toContain(alphaBatch);
    const own = await request(svc.app).get(`/v1/batches/${alphaBatch}`).set(auth('alpha'));
    expect(own.status).toBe(200);
  });

  it('admin endpoints refuse client keys with 403', async () => {
    expectProblem(
      await request(svc.app)
        .post('/v1/rulesets')
        .set(auth('alpha'))
        .set('Content-Type', 'application/yaml')
        .send('name: x'),
      403,
      'forbidden',
    );
    expectProblem(
      await request(svc.app).post(`/v1/batches/${alphaBatch}/reprocess`).set(auth('alpha')).send({}),
      403,
      'forbidden',
    );
  });

  it('lists batches newest first with a cursor; a finished batch cannot be cancelled', async () => {
    const p1 = await request(svc.app).get('/v1/batches?limit=2').set(auth('alpha'));
    expect(p1.status).toBe(200);
    expect(p1.body.batches).toHaveLength(2);
    expect(p1.body.batches[0].id > p1.body.batches[1].id).toBe(true);
    const p2 = await request(svc.app).get(`/v1/batches?limit=2&before=${p1.body.next}`).set(auth('alpha'));
    expect(p2.body.batches[0].id < p1.body.batches[1].id).toBe(true);
    expectProblem(
      await request(svc.app).post(`/v1/batches/${alphaBatch}/cancel`).set(auth('alpha')),
      409,
      'batch-finished',
    );
  });
});

describe('idempotency', () => {
  it('same key + same body replays the first response; another body is 422', async () => {
    const body = { spectra: [simulatedSpectrum('idem-1', 5)] };
    const a = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Idempotency-Key', 'k-1')
      .send(body);
    expect(a.status).toBe(202);
    const b = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Idempotency-Key', 'k-1')
      .send(body);
    expect(b.status).toBe(202);
    expect(b.body.id).toBe(a.body.id);
    expect(b.headers['idempotent-replayed']).toBe('true');
    expect(b.headers.location).toBe(a.headers.location);
    const c = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Idempotency-Key', 'k-1')
      .send({ spectra: [simulatedSpectrum('idem-2', 6)] });
    expectProblem(c, 422, 'idempotency-key-reused');
    // Keys are per client: the same key from another client is a new request.
    const d = await request(svc.app)
      .post('/v1/batches')
      .set(auth('beta'))
      .set('Idempotency-Key', 'k-1')
      .send(body);
    expect(d.status).toBe(202);
    expect(d.body.id).not.toBe(a.body.id);
    // Uploads too (the fingerprint is the file and options, not the multipart boundary).
    const u1 = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Idempotency-Key', 'k-up')
      .attach('file', Buffer.from(MGF), 'a.mgf');
    const u2 = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Idempotency-Key', 'k-up')
      .attach('file', Buffer.from(MGF), 'a.mgf');
    expect(u2.body.id).toBe(u1.body.id);
    const u3 = await request(svc.app)
      .post('/v1/batches')
      .set(auth('alpha'))
      .set('Idempotency-Key', 'k-up')
      .attach('file', Buffer.from(MIXED_MGF), 'a.mgf');
    expectProblem(u3, 422, 'idempotency-key-reused');
    expectProblem(
      await request(svc.app)
        .post('/v1/batches')
        .set(auth('alpha'))
        .set('Idempotency-Key', 'bad key with spaces\u00e9')
        .send(body),
      400,
      'bad-idempotency-key',
    );
  });

  it('a retry while the first request is still running is 409', async () => {
    const server = svc.app.listen(0, '127.0.0.1');
    await new Promise((r) => server.once('listening', r));
    const port = (server.address() as { port: number }).port;
    const { request: httpRequest } = await import('node:http');
    try {
      const first = httpRequest({
        host: '127.0.0.1',
        port,
        method: 'POST',
        path: '/v1/batches',
        headers: { ...auth('alpha'), 'Content-Type': 'application/x-mgf', 'Idempotency-Key': 'k-slow' },
      });
      const firstDone = new Promise<{ status: number; body: string }>((resolve, reject) => {
        first.on('response', (res) => {
          let body = '';
          res.on('data', (c) => (body += c));
          res.on('end', () => resolve({ status: res.statusCode ?? 0, body }));
        });
        first.on('error', reject);
      });
      first.write(MGF.slice(0, 100));
      // The key is claimed as soon as the first request starts.
      const { sha256Hex } = await import('../../../store/hash.js');
      await waitFor(
        async () =>
          (await svc.store.redis.exists(svc.store.keys.idempotency('alpha-lab', sha256Hex('k-slow')))) === 1,
      );
      const second = await request(server)
        .post('/v1/batches')
        .set(auth('alpha'))
        .set('Content-Type', 'application/x-mgf')
        .set('Idempotency-Key', 'k-slow')
        .send(MGF);
      expectProblem(second, 409, 'idempotency-key-in-flight');
      first.end(MGF.slice(100));
      const done = await firstDone;
      expect(done.status).toBe(202);
      const third = await request(server)
        .post('/v1/batches')
        .set(auth('alpha'))
        .set('Content-Type', 'application/x-mgf')
        .set('Idempotency-Key', 'k-slow')
        .send(MGF);
      expect(third.status).toBe(202);
      expect(third.body.id).toBe(JSON.parse(done.body).id);
    } finally {
      await new Promise((r) => server.close(r));
    }
  });
});

describe('operations', () => {
  it('/livez, /readyz, /metrics, X-Request-Id, unknown routes', async () => {
    expect((await request(svc.app).get('/livez')).status).toBe(200);
    const ready = await request(svc.app).get('/readyz');
    expect(ready.status).toBe(200);
    const given = await request(svc.app).get('/livez').set('X-Request-Id', 'lims-req-42');
    expect(given.headers['x-request-id']).toBe('lims-req-42');
    const made = await request(svc.app).get('/livez');
    expect(made.headers['x-request-id']).toMatch(/^[0-9a-f-]{36}$/);
    const m = await request(svc.app).get('/metrics');
    expect(m.status).toBe(200);
    for (const name of [
      'peel_http_requests_total',
      'peel_http_request_duration_seconds_bucket',
      'peel_queue_jobs{queue="score",state="completed"}',
      'peel_spectra_processed_total',
      'peel_chunk_jobs_total',
      'peel_batches_submitted_total',
    ]) {
      expect(m.text).toContain(name);
    }
    expect(m.text).not.toMatch(/route="\/v1\/batches\/b[0-9a-z]{9}/); // no per-batch labels
    const nf = await request(svc.app).get('/nowhere');
    expectProblem(nf, 404, 'not-found');
    expect(nf.body.requestId).toBe(nf.headers['x-request-id']);
    expect(nf.headers['x-content-type-options']).toBe('nosniff'); // helmet
  });
});
