/**
 * The dashboard's side of the API, against real Postgres: the chart series endpoint (raw below
 * maxPoints, min/max per bucket above it with every extreme kept, window from the load events, 4xx for
 * bad input) and the static serving of the built app (plant time zone filled in, CSP, caching, only
 * files that exist, API paths untouched, a hint page when the app is not built).
 */
import { mkdtempSync, mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { loadConfig } from '@ausline/contracts';
import { createTestDatabase } from '../../../../tests/support/database.js';
import { testAppEnv } from '../../../../tests/support/env.js';
import { testQueuePrefix } from '../../../../tests/support/redis.js';
import { createBatch, seedPlant } from '../../../../tests/fixtures/austempering-plant.js';
import { createUserWithSession } from '../../test/support/principals.js';
import { createApiApp } from '../create-api-app.js';
import { DASHBOARD_CSP, TIME_ZONE_PLACEHOLDER } from './static-files.js';

const distDir = mkdtempSync(join(tmpdir(), 'ausline-dash-'));
mkdirSync(join(distDir, 'assets'));
writeFileSync(join(distDir, 'index.html'), `<!doctype html><meta name="ausline-plant-time-zone" content="${TIME_ZONE_PLACEHOLDER}"><script type="module" src="/assets/app-1.js"></script>`);
writeFileSync(join(distDir, 'assets', 'app-1.js'), 'console.log(1)');
writeFileSync(join(distDir, 'favicon.svg'), '<svg xmlns="http://www.w3.org/2000/svg"/>');
afterAll(() => rmSync(distDir, { recursive: true, force: true }));

const db = await createTestDatabase();
const config = loadConfig(
  testAppEnv({ databaseUrl: db.url, queuePrefix: testQueuePrefix('dash') }, { LOG_LEVEL: 'silent', DASHBOARD_DIR: distDir, PLANT_TIME_ZONE: 'Europe/Berlin' }),
);
const api = await createApiApp(config);
afterAll(() => api.close());
const user = await createUserWithSession(api.app, { roles: ['METALLURGIST'] });

// A load with a day of 1 Hz bath data on tc1, a planted 1-second spike and dip, and 10 samples on tc2.
const plant = await seedPlant(db.prisma);
const batch = await createBatch(db.prisma, plant);
const t0 = Date.UTC(2026, 2, 1, 5, 0, 0);
await db.prisma.loadEvent.createMany({
  data: [
    { batchId: batch.id, kind: 'CHARGED', at: new Date(t0 - 2 * 3_600_000), equipmentId: plant.furnaceId },
    { batchId: batch.id, kind: 'OUT_OF_FURNACE', at: new Date(t0 - 10_000), equipmentId: plant.furnaceId },
    { batchId: batch.id, kind: 'INTO_BATH', at: new Date(t0), equipmentId: plant.bathId },
    { batchId: batch.id, kind: 'OUT_OF_BATH', at: new Date(t0 + 86_400_000), equipmentId: plant.bathId },
  ],
});
const N = 86_400;
const ts: Date[] = [];
const vs: number[] = [];
for (let i = 0; i < N; i++) {
  ts.push(new Date(t0 + i * 1000));
  vs.push(i === 40_000 ? 395.5 : i === 60_000 ? 341.25 : 370 + Math.sin(i / 500));
}
await db.pool.query(
  'INSERT INTO "Sample" ("channelId","t","value") SELECT $1::uuid, * FROM unnest($2::timestamptz[], $3::float8[])',
  [plant.tcIds[0], ts, vs],
);
await db.pool.query(
  'INSERT INTO "Sample" ("channelId","t","value") SELECT $1::uuid, * FROM unnest($2::timestamptz[], $3::float8[])',
  [plant.tcIds[1], ts.slice(0, 10), vs.slice(0, 10)],
);

async function series(query: string): Promise<{ status: number; body: any }> {
  const res = await fetch(`${api.url}/v1/batches/${batch.id}/series${query}`, { headers: user.headers });
  return { status: res.status, body: await res.json() };
}

describe('GET /v1/batches/:id/series', () => {
  it('thins a day of 1 Hz data to min/max per bucket and keeps the spike and the dip at their own times', async () => {
    const started = performance.now();
    const { status, body } = await series('?maxPoints=2000');
    const ms = performance.now() - started;
    expect(status).toBe(200);
    console.log(`series of ${N} samples thinned to 2000 points in ${ms.toFixed(0)} ms (printed, not asserted)`);
    expect(body.window).toEqual({ from: new Date(t0 - 2 * 3_600_000).toISOString(), to: new Date(t0 + 86_400_000).toISOString(), open: false });
    const tc1 = body.channels.find((c: any) => c.channelId === plant.tcIds[0]);
    expect(tc1).toMatchObject({ channelCode: 'tc1', equipmentKind: 'BATH', quantity: 'TEMPERATURE_C', role: 'BATH_TC', count: N, decimated: true });
    expect(tc1.points.length).toBeLessThanOrEqual(2000);
    expect(tc1.points.length).toBeGreaterThan(1000);
    const values = tc1.points.map((p: [number, number]) => p[1]);
    expect(Math.max(...values)).toBe(395.5);
    expect(Math.min(...values)).toBe(341.25);
    expect(tc1.points.find((p: [number, number]) => p[1] === 395.5)[0]).toBe(t0 + 40_000 * 1000);
    for (let i = 1; i < tc1.points.length; i++) expect(tc1.points[i][0]).toBeGreaterThan(tc1.points[i - 1][0]);
    // tc2 has 10 samples: sent as they are.
    const tc2 = body.channels.find((c: any) => c.channelId === plant.tcIds[1]);
    expect(tc2).toMatchObject({ count: 10, decimated: false, bucketMs: null });
    expect(tc2.points).toEqual(ts.slice(0, 10).map((t, i) => [t.getTime(), vs[i]]));
    // Every channel of the line is listed, including ones without data in the window.
    expect(body.channels.map((c: any) => c.channelCode).sort()).toEqual(['agitator', 'tc1', 'tc2', 'zone1', 'zone2']);
  });

  it('sends every sample when maxPoints allows it, and honours from/to and channelIds', async () => {
    const from = new Date(t0 + 1000).toISOString();
    const to = new Date(t0 + 60_000).toISOString();
    const { status, body } = await series(`?channelIds=${plant.tcIds[0]}&from=${from}&to=${to}&maxPoints=100000`);
    expect(status).toBe(200);
    expect(body.channels).toHaveLength(1);
    expect(body.channels[0]).toMatchObject({ count: 60, decimated: false });
    expect(body.channels[0].points[0][0]).toBe(t0 + 1000);
    expect(body.channels[0].points[59][0]).toBe(t0 + 60_000);
  });

  it('answers 4xx naming the field for bad input, 404 for an unknown batch, 401 without a session', async () => {
    const bad = await series('?maxPoints=1');
    expect(bad.status).toBe(400);
    expect(bad.body.issues).toEqual([expect.objectContaining({ path: 'query.maxPoints' })]);
    const order = await series(`?from=${new Date(t0 + 5000).toISOString()}&to=${new Date(t0).toISOString()}`);
    expect(order.status).toBe(400);
    expect(order.body.issues[0].path).toBe('query.to');
    const other = await series('?channelIds=00000000-0000-4000-8000-000000000000');
    expect(other.status).toBe(400);
    expect(other.body.message).toContain('not a channel of this batch');
    const unknown = await fetch(`${api.url}/v1/batches/00000000-0000-4000-8000-000000000000/series`, { headers: user.headers });
    expect(unknown.status).toBe(404);
    expect((await fetch(`${api.url}/v1/batches/${batch.id}/series`)).status).toBe(401);
  });
});

describe('the built dashboard served by the API', () => {
  it('serves index.html at / with the plant time zone filled in and the dashboard CSP', async () => {
    const res = await fetch(`${api.url}/`);
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toBe('text/html; charset=utf-8');
    expect(res.headers.get('content-security-policy')).toBe(DASHBOARD_CSP);
    expect(res.headers.get('cache-control')).toBe('no-cache');
    const html = await res.text();
    expect(html).toContain('content="Europe/Berlin"');
    expect(html).not.toContain(TIME_ZONE_PLACEHOLDER);
  });

  it('serves hashed assets for good and other files of the build', async () => {
    const js = await fetch(`${api.url}/assets/app-1.js`);
    expect(js.status).toBe(200);
    expect(js.headers.get('content-type')).toBe('text/javascript; charset=utf-8');
    expect(js.headers.get('cache-control')).toBe('public, max-age=31536000, immutable');
    expect(await js.text()).toBe('console.log(1)');
    expect((await fetch(`${api.url}/favicon.svg`)).headers.get('content-type')).toBe('image/svg+xml');
    expect((await fetch(`${api.url}/assets/app-1.js`, { method: 'HEAD' })).status).toBe(200);
  });

  it('answers only files that exist: unknown paths and traversal get the API 404, API paths are untouched', async () => {
    const missing = await fetch(`${api.url}/assets/nope.js`);
    expect(missing.status).toBe(404);
    expect(await missing.json()).toMatchObject({ statusCode: 404 });
    expect((await fetch(`${api.url}/assets/..%2F..%2Fpackage.json`)).status).toBe(404);
    expect((await fetch(`${api.url}/..%2Fpackage.json`)).status).toBe(404);
    expect((await fetch(`${api.url}/health/live`)).status).toBe(200);
    const v1 = await fetch(`${api.url}/v1/lines`);
    expect(v1.status).toBe(401);
    expect(v1.headers.get('content-security-policy')).toBe("default-src 'none'; frame-ancestors 'none'");
    expect((await fetch(`${api.url}/`, { method: 'POST' })).status).toBe(404);
  });
});

describe('without a build', () => {
  it('answers / with a hint page (503) and leaves the API alone', async () => {
    const empty = mkdtempSync(join(tmpdir(), 'ausline-nodash-'));
    const db2 = await createTestDatabase({ dropAfterAll: false });
    const cfg = loadConfig(testAppEnv({ databaseUrl: db2.url, queuePrefix: testQueuePrefix('nodash') }, { LOG_LEVEL: 'silent', DASHBOARD_DIR: empty }));
    const app2 = await createApiApp(cfg);
    try {
      const res = await fetch(`${app2.url}/`);
      expect(res.status).toBe(503);
      expect(await res.text()).toContain('npm run build:dashboard');
      expect((await fetch(`${app2.url}/health/live`)).status).toBe(200);
    } finally {
      await app2.close();
      await db2.drop();
      rmSync(empty, { recursive: true, force: true });
    }
  });
});
