/**
 * Size and rate limits (issue 7, item 4):
 *   - every write endpoint answers a body over 5 MB with 413 naming the limit and stores nothing,
 *     also when the body comes chunked, gzip-compressed (a small bomb), or with a Content-Length
 *     that lies;
 *   - per API key and per client address token buckets answer 429 with Retry-After in the error
 *     shape, refill at the configured rate, never limit the health probes, and a stranger who knows a
 *     key's prefix cannot use up that key's allowance.
 */
import { gzipSync } from 'node:zlib';
import { randomUUID } from 'node:crypto';
import { afterAll, describe, expect, it } from 'vitest';
import { BODY_LIMIT_BYTES } from '../../apps/api/src/create-api-app.js';
import { createApiKeyFor, createTestPlant, createUserWithSession } from '../../apps/api/test/support/principals.js';
import { startTestApi } from '../../apps/api/test/support/test-api.js';
import { createBatchViaApi, startIngestWorld } from '../ingest-fixtures.js';
import { expectUsefulError, FuzzClient, WriteLog, type RawReply } from './support.js';

const world = await startIngestWorld('limits', { RATE_LIMIT_IP_PER_S: 0, RATE_LIMIT_KEY_PER_S: 0 } as object);
const client = new FuzzClient(world.api.url);
afterAll(() => client.close());
const writes = await WriteLog.install(world.db.pool);
const batch = await createBatchViaApi(world);

const OVER_LIMIT = BODY_LIMIT_BYTES + 1024;

/** A JSON object of about `bytes` bytes: one huge string in a field the endpoint knows. */
function bigJson(field: string, bytes: number, base: Record<string, unknown> = {}): string {
  return JSON.stringify({ ...base, [field]: 'x'.repeat(bytes) });
}

const endpoints: Array<{ name: string; path: string; headers: () => Record<string, string>; body: () => string; contentType?: string }> = [
  { name: 'heat', path: '/v1/heats', headers: () => world.labKey.headers, body: () => bigJson('grade', OVER_LIMIT, { heatNumber: 'H-BIG', material: 'STEEL', chemistryWtPct: { C: 0.5 } }) },
  { name: 'heat CSV', path: '/v1/heats/import', headers: () => world.labKey.headers, contentType: 'text/csv', body: () => `heatNumber,material,C\n${'H-1,STEEL,0.5\n'.repeat(Math.ceil(OVER_LIMIT / 14))}` },
  { name: 'spec', path: '/v1/specs', headers: () => world.quality.headers, body: () => bigJson('description', OVER_LIMIT, { code: 'P-BIG', name: 'n', material: 'STEEL' }) },
  { name: 'spec version', path: `/v1/specs/${world.plant.specId}/versions`, headers: () => world.quality.headers, body: () => bigJson('chemistryLimits', OVER_LIMIT) },
  { name: 'batch', path: '/v1/batches', headers: () => world.admin.headers, body: () => bigJson('code', OVER_LIMIT) },
  { name: 'load event', path: `/v1/batches/${batch.id}/events`, headers: () => world.furnaceKey.headers, body: () => bigJson('equipmentCode', OVER_LIMIT, { kind: 'CHARGED', at: Date.now() - 1000 }) },
  { name: 'lab result', path: `/v1/batches/${batch.id}/lab-results`, headers: () => world.labKey.headers, body: () => bigJson('note', OVER_LIMIT, { kind: 'HARDNESS', scale: 'HBW', testStandard: 'ISO 6506-1', readings: [400], externalRef: 'R-BIG' }) },
  {
    name: 'samples',
    path: `/v1/equipment/${world.plant.bathId}/samples`,
    headers: () => world.bathKey.headers,
    // Real samples, just far too many of them (about 130,000 at ~50 bytes).
    body: () => JSON.stringify({ samples: Array.from({ length: Math.ceil(OVER_LIMIT / 40) }, (_v, i) => ({ channel: 'tc1', t: Date.now() - 3_600_000 + i, value: 370.25 })) }),
  },
  { name: 'deviation action', path: `/v1/deviations/${randomUUID()}/acknowledge`, headers: () => world.metallurgist.headers, body: () => bigJson('reason', OVER_LIMIT) },
  { name: 'line', path: '/v1/lines', headers: () => world.admin.headers, body: () => bigJson('name', OVER_LIMIT, { code: 'L-BIG', timeZone: 'UTC' }) },
  { name: 'user', path: '/v1/users', headers: () => world.admin.headers, body: () => bigJson('displayName', OVER_LIMIT, { email: 'big@plant.test', roles: ['QUALITY'] }) },
  { name: 'API key', path: '/v1/api-keys', headers: () => world.admin.headers, body: () => bigJson('label', OVER_LIMIT, { scope: 'LAB' }) },
  { name: 'login', path: '/v1/auth/login', headers: () => ({}), body: () => bigJson('password', OVER_LIMIT, { email: 'someone@plant.test' }) },
];

function expect413(reply: RawReply, what: string): void {
  expect(reply.status, `${what}: ${reply.text.slice(0, 200)}`).toBe(413);
  expectUsefulError(reply);
  expect(reply.json.message).toMatch(/larger than the limit of 5\.0 MB/);
}

describe('payload size limit (5 MB)', () => {
  it('every write endpoint answers 413 naming the limit and stores nothing', { timeout: 120_000 }, async () => {
    const mark = await writes.mark();
    for (const endpoint of endpoints) {
      const body = endpoint.body();
      expect(Buffer.byteLength(body), endpoint.name).toBeGreaterThan(BODY_LIMIT_BYTES);
      const reply = await client.request('POST', endpoint.path, { headers: { ...endpoint.headers(), 'content-type': endpoint.contentType ?? 'application/json' }, body });
      expect413(reply, endpoint.name);
    }
    expect(await writes.since(mark)).toEqual([]);
  });

  it('a gzip body that inflates past the limit is 413 too (the limit counts inflated bytes)', async () => {
    const inflated = Buffer.from(bigJson('grade', 50 * 1024 * 1024, { heatNumber: 'H-GZ', material: 'STEEL', chemistryWtPct: { C: 0.5 } }));
    const compressed = gzipSync(inflated);
    expect(compressed.length).toBeLessThan(200 * 1024); // 50 MB of 'x' squeezes to ~50 KB
    const mark = await writes.mark();
    const reply = await client.request('POST', '/v1/heats', { headers: { ...world.labKey.headers, 'content-type': 'application/json', 'content-encoding': 'gzip' }, body: compressed });
    expect413(reply, 'gzip bomb');
    const garbage = await client.request('POST', '/v1/heats', { headers: { ...world.labKey.headers, 'content-type': 'application/json', 'content-encoding': 'gzip' }, body: 'not gzip at all' });
    expect(garbage.status).toBeGreaterThanOrEqual(400);
    expect(garbage.status).toBeLessThan(500);
    const unknownEncoding = await client.request('POST', '/v1/heats', { headers: { ...world.labKey.headers, 'content-type': 'application/json', 'content-encoding': 'br-nope' }, body: '{}' });
    expect(unknownEncoding.status).toBe(415);
    expect(await writes.since(mark)).toEqual([]);
  });

  it('a chunked body over the limit is 413; a Content-Length that lies is 400', async () => {
    const http = await import('node:http');
    const url = new URL(world.api.url);
    const chunked = await new Promise<{ status: number; text: string }>((resolve, reject) => {
      const req = http.request({ host: url.hostname, port: url.port, method: 'POST', path: '/v1/heats', headers: { ...world.labKey.headers, 'content-type': 'application/json', 'transfer-encoding': 'chunked' } }, (res) => {
        let text = '';
        res.on('data', (c) => (text += c));
        res.on('end', () => resolve({ status: res.statusCode ?? 0, text }));
      });
      req.on('error', (error: NodeJS.ErrnoException) => (error.code === 'EPIPE' || error.code === 'ECONNRESET' ? undefined : reject(error)));
      req.write('{"heatNumber":"H-CH","material":"STEEL","chemistryWtPct":{"C":0.5},"grade":"');
      const piece = 'x'.repeat(64 * 1024);
      for (let sent = 0; sent < OVER_LIMIT; sent += piece.length) req.write(piece);
      req.end('"}');
    });
    expect(chunked.status, chunked.text.slice(0, 200)).toBe(413);

    const net = await import('node:net');
    const lying = await new Promise<string>((resolve, reject) => {
      const socket = net.connect(Number(url.port), url.hostname, () => {
        const body = '{"heatNumber":"H-LIE","material":"STEEL","chemistryWtPct":{"C":0.5}}';
        socket.write(`POST /v1/heats HTTP/1.1\r\nHost: x\r\nAuthorization: ${world.labKey.headers.authorization}\r\nContent-Type: application/json\r\nContent-Length: ${body.length + 50}\r\nConnection: close\r\n\r\n${body}`);
        socket.end();
      });
      let text = '';
      socket.on('data', (c) => (text += c));
      socket.on('end', () => resolve(text));
      socket.on('error', reject);
    });
    // The client half-closed before the announced length: the body is incomplete.
    expect(lying).toMatch(/^HTTP\/1\.1 400/);
    expect(await world.db.prisma.heat.count({ where: { heatNumber: { in: ['H-CH', 'H-LIE'] } } })).toBe(0);
  });
});

describe('rate limits', () => {
  it('per API key: the burst, then 429 with Retry-After; other keys and the health probes are not affected', { timeout: 60_000 }, async () => {
    const { api } = await startTestApi('limits-key', { RATE_LIMIT_KEY_PER_S: 2, RATE_LIMIT_KEY_BURST: 5, RATE_LIMIT_IP_PER_S: 0 } as object);
    const limited = new FuzzClient(api.url);
    try {
      const plant = await createTestPlant(api.app);
      const keyA = await createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id] });
      const keyB = await createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id] });
      const get = (headers: Record<string, string>) => limited.request('GET', `/v1/equipment/${plant.bath2Id}/channels`, { headers });

      // A stranger with key A's public prefix and a wrong secret: refused (401, then 429 on its own bucket) ...
      const forged = { authorization: `ApiKey ${keyA.prefix}.${'0'.repeat(43)}` };
      const forgedStatuses = [];
      for (let i = 0; i < 8; i++) forgedStatuses.push((await get(forged)).status);
      expect(forgedStatuses.slice(0, 5)).toEqual([401, 401, 401, 401, 401]);
      expect(forgedStatuses.slice(5)).toEqual([429, 429, 429]);
      // ... and key A still has its whole burst.
      const statuses: number[] = [];
      let refused: RawReply | undefined;
      for (let i = 0; i < 6; i++) {
        const reply = await get(keyA.headers);
        statuses.push(reply.status);
        if (reply.status === 429) refused = reply;
      }
      expect(statuses).toEqual([200, 200, 200, 200, 200, 429]);
      expectUsefulError(refused!);
      expect(refused!.json.message).toMatch(/Too many requests with this API key \(at most 2 per second\); retry after 1 s/);
      expect(refused!.headers['retry-after']).toBe('1');
      // The same key in X-Api-Key is the same allowance.
      expect((await limited.request('GET', `/v1/equipment/${plant.bath2Id}/channels`, { headers: { 'x-api-key': keyA.key } })).status).toBe(429);
      expect((await get(keyB.headers)).status).toBe(200);
      expect((await limited.request('GET', '/health/live')).status).toBe(200);
      // Refilled at 2 per second.
      await new Promise((resolve) => setTimeout(resolve, 600));
      expect((await get(keyA.headers)).status).toBe(200);
    } finally {
      limited.close();
    }
  });

  it('per client address: every request counts (signed in or not), over the burst 429; probes never', { timeout: 60_000 }, async () => {
    const { api } = await startTestApi('limits-ip', { RATE_LIMIT_IP_PER_S: 1, RATE_LIMIT_IP_BURST: 6, RATE_LIMIT_KEY_PER_S: 0 } as object);
    const limited = new FuzzClient(api.url);
    try {
      const user = await createUserWithSession(api.app, { roles: ['ADMIN'] });
      const statuses: number[] = [];
      for (let i = 0; i < 4; i++) statuses.push((await limited.request('GET', '/v1/lines')).status);
      for (let i = 0; i < 3; i++) statuses.push((await limited.request('GET', '/v1/lines', { headers: user.headers })).status);
      expect(statuses.slice(0, 4)).toEqual([401, 401, 401, 401]);
      expect(statuses.slice(4, 6)).toEqual([200, 200]);
      expect(statuses[6]).toBe(429);
      const refused = await limited.request('POST', '/v1/lines', { headers: { ...user.headers, 'content-type': 'application/json' }, body: '{}' });
      expect(refused.status).toBe(429);
      expectUsefulError(refused);
      expect(Number(refused.headers['retry-after'])).toBeGreaterThanOrEqual(1);
      for (const probe of ['/health/live', '/metrics']) expect((await limited.request('GET', probe)).status, probe).toBe(200);
    } finally {
      limited.close();
    }
  });
});
