/**
 * Security headers and CORS (issue 7, item 5), on every kind of response the API gives: JSON data,
 * each error status, the probes, the OpenAPI page, the dashboard page and its assets:
 *   - Content-Security-Policy with frame-ancestors 'none' (JSON: default-src 'none'), X-Frame-Options
 *     DENY, X-Content-Type-Options nosniff, Referrer-Policy no-referrer, no X-Powered-By;
 *   - CORS closed by default (no Access-Control-Allow-Origin for any Origin, preflights get no
 *     allow-headers), and open only for the exact configured origins, never with credentials;
 *   - the dashboard's file server answers only its own files (no path traversal).
 */
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { DASHBOARD_CSP, TIME_ZONE_PLACEHOLDER } from '../../apps/api/src/dashboard/static-files.js';
import { createTestPlant, createUserWithSession } from '../../apps/api/test/support/principals.js';
import { startTestApi } from '../../apps/api/test/support/test-api.js';
import { FuzzClient, type RawReply } from '../fuzz/support.js';

// A built dashboard stand-in: the page (with the time-zone placeholder) and one hashed asset.
const dashboardDir = mkdtempSync(join(tmpdir(), 'ausline-dashboard-'));
mkdirSync(join(dashboardDir, 'assets'));
writeFileSync(join(dashboardDir, 'index.html'), `<!doctype html><meta name="tz" content="${TIME_ZONE_PLACEHOLDER}"><script type="module" src="/assets/app-1a2b.js"></script>`);
writeFileSync(join(dashboardDir, 'assets', 'app-1a2b.js'), 'console.log("dashboard")');
afterAll(() => rmSync(dashboardDir, { recursive: true, force: true }));

// Closed CORS (the default) and the dashboard served.
const closed = await startTestApi('headers', { DASHBOARD_DIR: dashboardDir, PLANT_TIME_ZONE: 'Europe/Berlin' });
const client = new FuzzClient(closed.api.url);
afterAll(() => client.close());
const admin = await createUserWithSession(closed.api.app, { roles: ['ADMIN'] });
const quality = await createUserWithSession(closed.api.app, { roles: ['QUALITY'] });
const plant = await createTestPlant(closed.api.app);

const ALLOWED_ORIGIN = 'https://dashboard.plant.test';
const open = await startTestApi('headers-cors', { CORS_ORIGINS: [ALLOWED_ORIGIN, 'http://localhost:5173'] });
const openClient = new FuzzClient(open.api.url);
afterAll(() => openClient.close());

function expectSecurityHeaders(reply: RawReply, what: string): void {
  const h = reply.headers;
  expect(h['x-content-type-options'], what).toBe('nosniff');
  expect(h['x-frame-options'], what).toBe('DENY');
  expect(h['referrer-policy'], what).toBe('no-referrer');
  expect(h['content-security-policy'], what).toMatch(/frame-ancestors 'none'/);
  expect(h['x-powered-by'], what).toBeUndefined();
  expect(h['server'], what).toBeUndefined();
}

describe('security headers', () => {
  it('on JSON answers of every status, with the strict API policy and no caching of plant data', async () => {
    const json = { 'content-type': 'application/json' };
    const cases: Array<[string, Promise<RawReply>, number]> = [
      ['200 list', client.request('GET', '/v1/lines', { headers: admin.headers }), 200],
      ['201 create', client.request('POST', '/v1/lines', { headers: { ...admin.headers, ...json }, body: JSON.stringify({ code: 'L-H1', name: 'Line', timeZone: 'UTC' }) }), 201],
      ['400 invalid', client.request('POST', '/v1/lines', { headers: { ...admin.headers, ...json }, body: '{"code":7}' }), 400],
      ['400 malformed JSON', client.request('POST', '/v1/lines', { headers: { ...admin.headers, ...json }, body: '{' }), 400],
      ['401 no credential', client.request('GET', '/v1/lines'), 401],
      ['403 wrong role', client.request('POST', '/v1/lines', { headers: { ...quality.headers, ...json }, body: '{}' }), 403],
      ['404 unknown route', client.request('GET', '/v1/nothing-here', { headers: admin.headers }), 404],
      ['404 unknown id', client.request('GET', '/v1/lines/00000000-0000-4000-8000-000000000000', { headers: admin.headers }), 404],
      ['409 conflict', client.request('POST', `/v1/equipment/${plant.bath2Id}/channels`, { headers: { ...admin.headers, ...json }, body: '{"code":"tc1","quantity":"TEMPERATURE_C","role":"BATH_TC"}' }).then(() => client.request('POST', `/v1/equipment/${plant.bath2Id}/channels`, { headers: { ...admin.headers, ...json }, body: '{"code":"tc1","quantity":"TEMPERATURE_C","role":"BATH_TC"}' })), 409],
      ['415 media type', client.request('POST', '/v1/lines', { headers: { ...admin.headers, 'content-type': 'application/xml' }, body: '<x/>' }), 415],
    ];
    for (const [what, pending, status] of cases) {
      const reply = await pending;
      expect(reply.status, `${what}: ${reply.text.slice(0, 200)}`).toBe(status);
      expectSecurityHeaders(reply, what);
      expect(reply.headers['content-security-policy'], what).toBe("default-src 'none'; frame-ancestors 'none'");
      expect(reply.headers['content-type'], what).toBe('application/json; charset=utf-8');
      expect(reply.headers['cache-control'], what).toBe('no-store');
    }
  });

  it('on the probes, the metrics and the OpenAPI page and documents', async () => {
    for (const path of ['/health/live', '/health/ready', '/metrics', '/docs', '/docs-json', '/docs/swagger-ui-init.js']) {
      const reply = await client.request('GET', path);
      expect(reply.status, path).toBe(200);
      expectSecurityHeaders(reply, path);
    }
  });

  it('on the dashboard page and assets, with the dashboard policy (scripts from this origin only)', async () => {
    const page = await client.request('GET', '/');
    expect(page.status).toBe(200);
    expect(page.headers['content-type']).toBe('text/html; charset=utf-8');
    expectSecurityHeaders(page, 'dashboard page');
    expect(page.headers['content-security-policy']).toBe(DASHBOARD_CSP);
    expect(DASHBOARD_CSP).toMatch(/script-src 'self'(;|$)/);
    expect(DASHBOARD_CSP).not.toMatch(/unsafe-inline|unsafe-eval/);
    expect(DASHBOARD_CSP).toMatch(/object-src 'none'/);
    expect(DASHBOARD_CSP).toMatch(/base-uri 'none'/);
    expect(page.text).toContain('content="Europe/Berlin"');
    const asset = await client.request('GET', '/assets/app-1a2b.js');
    expect(asset.status).toBe(200);
    expect(asset.headers['content-type']).toBe('text/javascript; charset=utf-8');
    expectSecurityHeaders(asset, 'dashboard asset');
  });

  it('the file server answers only its own files: no way out of the folder', async () => {
    for (const path of ['/../../package.json', '/%2e%2e/%2e%2e/package.json', '/assets/..%2f..%2fpackage.json', '/assets/%2e%2e%2f%2e%2e%2f%2e%2e%2fetc%2fpasswd', '/..%5c..%5cpackage.json', '//etc/passwd']) {
      const reply = await client.request('GET', path);
      expect(reply.status, path).toBeGreaterThanOrEqual(400);
      expect(reply.status, path).toBeLessThan(500);
      expect(reply.text, path).not.toMatch(/"workspaces"|root:x:0:0/);
    }
  });
});

describe('CORS', () => {
  const paths = ['/v1/lines', '/v1/auth/login', '/health/live', '/docs-json'];

  it('is closed by default: no Access-Control-Allow-Origin for any origin, preflights refused', async () => {
    for (const path of paths) {
      for (const origin of ['https://evil.test', ALLOWED_ORIGIN, 'null']) {
        const simple = await client.request('GET', path, { headers: { origin, ...admin.headers } });
        expect(simple.headers['access-control-allow-origin'], `${path} ${origin}`).toBeUndefined();
        expect(simple.headers['access-control-allow-credentials'], `${path} ${origin}`).toBeUndefined();
        const preflight = await client.request('OPTIONS', path, { headers: { origin, 'access-control-request-method': 'POST', 'access-control-request-headers': 'authorization,content-type' } });
        expect(preflight.headers['access-control-allow-origin'], `preflight ${path} ${origin}`).toBeUndefined();
        expect(preflight.headers['access-control-allow-methods'], `preflight ${path} ${origin}`).toBeUndefined();
        expect(preflight.headers['access-control-allow-headers'], `preflight ${path} ${origin}`).toBeUndefined();
      }
    }
  });

  it('opens only for the exact configured origins, without credentials', async () => {
    const user = await createUserWithSession(open.api.app, { roles: ['ADMIN'] });
    const allowed = await openClient.request('GET', '/v1/lines', { headers: { origin: ALLOWED_ORIGIN, ...user.headers } });
    expect(allowed.status).toBe(200);
    expect(allowed.headers['access-control-allow-origin']).toBe(ALLOWED_ORIGIN);
    expect(allowed.headers['access-control-allow-credentials']).toBeUndefined();
    expect(allowed.headers['vary']).toMatch(/Origin/i);
    const preflight = await openClient.request('OPTIONS', '/v1/lines', { headers: { origin: ALLOWED_ORIGIN, 'access-control-request-method': 'POST', 'access-control-request-headers': 'authorization,content-type' } });
    expect(preflight.status).toBeLessThan(300);
    expect(preflight.headers['access-control-allow-origin']).toBe(ALLOWED_ORIGIN);
    for (const origin of ['https://evil.test', 'http://dashboard.plant.test', 'https://dashboard.plant.test.evil.test', 'https://evil.test/https://dashboard.plant.test', 'null', 'https://DASHBOARD.plant.test:443x']) {
      const simple = await openClient.request('GET', '/v1/lines', { headers: { origin, ...user.headers } });
      expect(simple.headers['access-control-allow-origin'], origin).toBeUndefined();
      const refused = await openClient.request('OPTIONS', '/v1/lines', { headers: { origin, 'access-control-request-method': 'POST' } });
      expect(refused.headers['access-control-allow-origin'], `preflight ${origin}`).toBeUndefined();
    }
  });
});
