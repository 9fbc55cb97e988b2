/**
 * The HTTP edge of the API: one error shape everywhere, bad input never a 500, unexpected errors a
 * 500 with a request id and no internals, request logs without credentials, security headers, CORS
 * closed unless configured, OpenAPI at /docs.
 */
import { describe, expect, it } from 'vitest';
import { loadConfig } from '@ausline/contracts';
import { createTestDatabase } from '../../../tests/support/database.js';
import { testAppEnv } from '../../../tests/support/env.js';
import { testQueuePrefix } from '../../../tests/support/redis.js';
import { createApiApp, BODY_LIMIT_BYTES } from '../src/create-api-app.js';
import { JsonLogger } from '../src/http/logger.js';
import { createApiKeyFor, createTestPlant, createUserWithSession } from './support/principals.js';
import { afterAll } from 'vitest';

const db = await createTestDatabase();
const logLines: string[] = [];
const config = loadConfig(
  testAppEnv({ databaseUrl: db.url, queuePrefix: testQueuePrefix('http') }, { CORS_ORIGINS: 'https://dashboard.plant.test' }),
);
const api = await createApiApp(config, { logger: new JsonLogger('debug', (line) => logLines.push(line)) });
afterAll(() => api.close());

const admin = await createUserWithSession(api.app, { roles: ['ADMIN'] });
const plant = await createTestPlant(api.app);
const jsonHeaders = { ...admin.headers, 'content-type': 'application/json' };

function expectErrorShape(body: any, status: number): void {
  expect(body).toEqual({
    statusCode: status,
    error: expect.any(String),
    message: expect.any(String),
    issues: expect.any(Array),
    requestId: expect.any(String),
  });
  expect(body.message).not.toContain('\n');
}

describe('error replies', () => {
  it('unknown routes get 404 in the same shape', async () => {
    for (const path of ['/nope', '/v1/nope', '/v2/lines']) {
      const res = await fetch(`${api.url}${path}`, { headers: admin.headers });
      expect(res.status, path).toBe(404);
      expectErrorShape((await res.json()) as any, 404);
    }
  });

  it('malformed JSON gets 400 that says so', async () => {
    const res = await fetch(`${api.url}/v1/lines`, { method: 'POST', headers: jsonHeaders, body: '{"code": "L1", ' });
    expect(res.status).toBe(400);
    const body = (await res.json()) as any;
    expectErrorShape(body, 400);
    expect(body.message).toMatch(/^Malformed JSON body: /);
  });

  it('a body over the limit gets 413 naming the limit', async () => {
    const res = await fetch(`${api.url}/v1/lines`, {
      method: 'POST',
      headers: jsonHeaders,
      body: JSON.stringify({ code: 'L-big', name: 'x'.repeat(BODY_LIMIT_BYTES), timeZone: 'UTC' }),
    });
    expect(res.status).toBe(413);
    const body = (await res.json()) as any;
    expectErrorShape(body, 413);
    expect(body.message).toMatch(/larger than the limit of 5\.0 MB/);
  });

  it('schema violations get 400 with every field path and nothing is written', async () => {
    const res = await fetch(`${api.url}/v1/lines`, {
      method: 'POST',
      headers: jsonHeaders,
      body: JSON.stringify({ code: 'L 9', name: 7, timeZone: 'Mars/Olympus', hCoefficientByAgitation: { none: -5 }, extra: true }),
    });
    expect(res.status).toBe(400);
    const body = (await res.json()) as any;
    expectErrorShape(body, 400);
    const paths = body.issues.map((i: { path: string }) => i.path).sort();
    expect(paths).toEqual(['code', 'extra', 'hCoefficientByAgitation.none', 'name', 'timeZone']);
    expect(body.message).toMatch(/^Invalid request body: \S+: .+ \(and 4 more issues\)$/);
    expect(await db.prisma.line.count({ where: { code: 'L 9' } })).toBe(0);
  });

  it('a JSON body that is not an object, or no body at all, gets 400', async () => {
    for (const body of ['[]', '"text"', '42', 'null', undefined]) {
      const res = await fetch(`${api.url}/v1/lines`, { method: 'POST', headers: jsonHeaders, body });
      expect(res.status, String(body)).toBe(400);
      expectErrorShape((await res.json()) as any, 400);
    }
  });

  it('a path id that is not a UUID gets 400 naming params.id', async () => {
    const res = await fetch(`${api.url}/v1/lines/not-a-uuid`, { headers: admin.headers });
    expect(res.status).toBe(400);
    expect(((await res.json()) as any).issues).toEqual([{ path: 'params.id', message: 'not a UUID' }]);
  });

  it('a bad percent-encoding in the path gets 400, not 500', async () => {
    const res = await fetch(`${api.url}/v1/lines/%E0%A4%A`, { headers: admin.headers });
    expect(res.status).toBe(400);
    expectErrorShape((await res.json()) as any, 400);
  });

  it('a repeated create answers 409 and stores one row', async () => {
    const body = JSON.stringify({ code: 'L-dup', name: 'Line dup', timeZone: 'Europe/Berlin' });
    const first = await fetch(`${api.url}/v1/lines`, { method: 'POST', headers: jsonHeaders, body });
    const second = await fetch(`${api.url}/v1/lines`, { method: 'POST', headers: jsonHeaders, body });
    expect(first.status).toBe(201);
    expect(second.status).toBe(409);
    const created = (await first.json()) as any;
    const conflict = (await second.json()) as any;
    expectErrorShape(conflict, 409);
    expect(conflict.message).toContain(created.id);
    expect(await db.prisma.line.count({ where: { code: 'L-dup' } })).toBe(1);
  });

  it('equipment and channel creation: 404 for a missing parent, 409 for an existing code', async () => {
    const missing = '00000000-0000-4000-8000-000000000001';
    const noLine = await fetch(`${api.url}/v1/lines/${missing}/equipment`, {
      method: 'POST',
      headers: jsonHeaders,
      body: JSON.stringify({ kind: 'BATH', code: 'B-x', name: 'Bath x' }),
    });
    expect(noLine.status).toBe(404);
    const channel = JSON.stringify({ code: 'tc1', quantity: 'TEMPERATURE_C', role: 'BATH_TC' });
    const ok = await fetch(`${api.url}/v1/equipment/${plant.bath2Id}/channels`, { method: 'POST', headers: jsonHeaders, body: channel });
    expect(ok.status).toBe(201);
    const again = await fetch(`${api.url}/v1/equipment/${plant.bath2Id}/channels`, { method: 'POST', headers: jsonHeaders, body: channel });
    expect(again.status).toBe(409);
    // Same channel code on another bath is fine.
    const other = await fetch(`${api.url}/v1/equipment/${plant.bath3Id}/channels`, { method: 'POST', headers: jsonHeaders, body: channel });
    expect(other.status).toBe(201);
    const wrongKind = await fetch(`${api.url}/v1/lines/${plant.lineId}/equipment`, {
      method: 'POST',
      headers: jsonHeaders,
      body: JSON.stringify({ kind: 'QUENCH_TANK', code: 'Q1', name: 'Q' }),
    });
    expect(wrongKind.status).toBe(400);
    expect(((await wrongKind.json()) as any).issues[0].path).toBe('kind');
  });

  it('an unexpected failure gets 500 with the request id and no internals; the log has the details', async () => {
    // Break the database under the running app: the table the handler reads is gone.
    await db.pool.query('ALTER TABLE "Line" RENAME TO "Line_moved_away"');
    try {
      const res = await fetch(`${api.url}/v1/lines`, { headers: { ...admin.headers, 'x-request-id': 'req-500-check' } });
      expect(res.status).toBe(500);
      const text = await res.text();
      const body = JSON.parse(text);
      expectErrorShape(body, 500);
      expect(body.requestId).toBe('req-500-check');
      expect(res.headers.get('x-request-id')).toBe('req-500-check');
      expect(text).not.toMatch(/Line_moved_away|"Line"|prisma|does not exist|at \w+ \(/i);
      const logged = logLines.map((l) => JSON.parse(l)).find((l) => l.msg === 'unhandled error' && l.requestId === 'req-500-check');
      expect(logged).toBeDefined();
      expect(logged.stack).toBeTruthy();
    } finally {
      await db.pool.query('ALTER TABLE "Line_moved_away" RENAME TO "Line"');
    }
  });
});

describe('request logs', () => {
  it('one JSON line per request with method, path, status, ms and principal kind; never a credential', async () => {
    const key = await createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id] });
    const secret = key.key.split('.')[1]!;
    const before = logLines.length;
    await fetch(`${api.url}/v1/equipment/${plant.bath2Id}/channels?token=${admin.token}`, { headers: key.headers });
    await fetch(`${api.url}/v1/lines`, { headers: { ...admin.headers, 'x-request-id': 'log-check-1' } });
    await fetch(`${api.url}/v1/auth/login`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ email: 'nobody@plant.test', password: 'this-is-a-secret-password' }),
    });
    const lines = logLines.slice(before);
    const entries = lines.map((l) => JSON.parse(l));
    const requests = entries.filter((e) => e.msg === 'request');
    expect(requests).toHaveLength(3);
    expect(requests[0]).toMatchObject({
      method: 'GET',
      path: `/v1/equipment/${plant.bath2Id}/channels`,
      route: '/v1/equipment/:id/channels',
      status: 200,
      principal: 'apiKey',
      principalId: key.prefix,
    });
    expect(requests[1]).toMatchObject({ path: '/v1/lines', status: 200, principal: 'user', principalId: admin.id, requestId: 'log-check-1' });
    expect(requests[2]).toMatchObject({ path: '/v1/auth/login', status: 401, principal: 'anonymous' });
    for (const r of requests) expect(typeof r.ms).toBe('number');
    const all = lines.join('\n');
    expect(all).not.toContain(admin.token);
    expect(all).not.toContain(secret);
    expect(all).not.toContain('this-is-a-secret-password');
  });
});

describe('headers', () => {
  it('sets security headers and a request id, and no X-Powered-By', async () => {
    const res = await fetch(`${api.url}/v1/lines`, { headers: admin.headers });
    expect(res.headers.get('x-content-type-options')).toBe('nosniff');
    expect(res.headers.get('x-frame-options')).toBe('DENY');
    expect(res.headers.get('content-security-policy')).toContain("default-src 'none'");
    expect(res.headers.get('cache-control')).toBe('no-store');
    expect(res.headers.get('x-request-id')).toMatch(/^[0-9a-f-]{36}$/);
    expect(res.headers.get('x-powered-by')).toBeNull();
  });

  it('allows CORS only for the configured origin', async () => {
    const allowed = await fetch(`${api.url}/v1/lines`, {
      method: 'OPTIONS',
      headers: { origin: 'https://dashboard.plant.test', 'access-control-request-method': 'GET' },
    });
    expect(allowed.headers.get('access-control-allow-origin')).toBe('https://dashboard.plant.test');
    const other = await fetch(`${api.url}/v1/lines`, {
      method: 'OPTIONS',
      headers: { origin: 'https://evil.test', 'access-control-request-method': 'GET' },
    });
    expect(other.headers.get('access-control-allow-origin')).toBeNull();
  });
});

describe('OpenAPI', () => {
  it('serves the document at /docs-json with the v1 endpoints, their access rules and request schemas', async () => {
    const res = await fetch(`${api.url}/docs-json`);
    expect(res.status).toBe(200);
    const doc = (await res.json()) as any;
    expect(doc.openapi).toMatch(/^3\./);
    const createLine = doc.paths['/v1/lines'].post;
    expect(createLine['x-access']).toEqual({ roles: ['ADMIN'], keys: [] });
    const schema = createLine.requestBody.content['application/json'].schema;
    expect(schema.required).toEqual(expect.arrayContaining(['code', 'name', 'timeZone']));
    expect(createLine.responses).toHaveProperty('401');
    expect(createLine.responses['403'].content['application/json'].schema.required).toContain('issues');
    expect(doc.paths['/v1/auth/login'].post['x-access']).toEqual({ public: true });
    expect(doc.paths['/v1/auth/login'].post.responses).not.toHaveProperty('403');
    expect(doc.paths['/v1/equipment/{id}/channels'].get['x-access']).toMatchObject({ keys: ['EQUIPMENT'], equipmentParam: 'id' });
    expect(doc.components.securitySchemes).toHaveProperty('session');
    expect(doc.components.securitySchemes).toHaveProperty('apiKey');
    const page = await fetch(`${api.url}/docs`);
    expect(page.status).toBe(200);
    expect(await page.text()).toContain('swagger');
  });
});
