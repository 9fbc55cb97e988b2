/**
 * Sessions, API key scope and sign-in throttling (issue 7, item 5), through the real API. The role x
 * endpoint matrix is tests/auth-matrix.test.ts; tests/api-auth.test.ts has sign-in, key creation,
 * revocation and bath-2/bath-3 scoping. Here:
 *   - a session really expires on the clock (a tiny SESSION_TTL_MIN), for headers and for ?token=
 *     on the event stream, and sign-out revokes both at once;
 *   - keys write only what their scope allows: a LAB key posts no samples, events or batches; an
 *     EQUIPMENT key posts no heats or lab results; a furnace key reports no bath steps; a key of one
 *     line touches no batch of another; a revoked key writes nothing anywhere;
 *   - failed sign-ins are limited per account and per address (429 with Retry-After, the same answer
 *     for unknown accounts, even the right password refused while locked, success refills, parallel
 *     guesses counted, malformed requests not).
 */
import { createHash } from 'node:crypto';
import { afterAll, describe, expect, it } from 'vitest';
import { createApiKeyFor, createUserWithSession, TEST_PASSWORD } from '../../apps/api/test/support/principals.js';
import { startTestApi } from '../../apps/api/test/support/test-api.js';
import { seedPlant } from '../fixtures/austempering-plant.js';
import { createBatchViaApi, startIngestWorld } from '../ingest-fixtures.js';
import { expectUsefulError, FuzzClient, type RawReply } from '../fuzz/support.js';

const world = await startIngestWorld('security-sessions');
const client = new FuzzClient(world.api.url);
afterAll(() => client.close());

// SESSION_TTL_MIN is whole minutes in loadConfig; this app gets 0.03 (1.8 s) straight in its config.
const TTL_MS = 1_800;
const shortLived = await startTestApi('security-sessions-ttl', { SESSION_TTL_MIN: TTL_MS / 60_000 });
const shortClient = new FuzzClient(shortLived.api.url);
afterAll(() => shortClient.close());

function post(path: string, body: unknown, headers: Record<string, string> = {}): Promise<RawReply> {
  return client.request('POST', path, { headers: { 'content-type': 'application/json', ...headers }, body: JSON.stringify(body) });
}

async function streamStatus(token: string, baseUrl = world.api.url): Promise<number> {
  const res = await fetch(`${baseUrl}/v1/stream?token=${encodeURIComponent(token)}`);
  await res.body?.cancel().catch(() => undefined);
  return res.status;
}

describe('sessions', () => {
  it('expire on the clock: the token works, then 401 everywhere, and the row is gone', async () => {
    const user = await createUserWithSession(shortLived.api.app, { roles: ['METALLURGIST'] });
    const login = await shortClient.request('POST', '/v1/auth/login', { headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email: user.email, password: TEST_PASSWORD }) });
    expect(login.status).toBe(200);
    const token: string = login.json.token;
    const expiresInMs = Date.parse(login.json.expiresAt) - Date.now();
    expect(expiresInMs).toBeGreaterThan(0);
    expect(expiresInMs).toBeLessThanOrEqual(TTL_MS);
    const bearer = { authorization: `Bearer ${token}` };
    expect((await shortClient.request('GET', '/v1/me', { headers: bearer })).status).toBe(200);
    expect(await streamStatus(token, shortLived.api.url)).toBe(200);

    await new Promise((resolve) => setTimeout(resolve, TTL_MS + 300));
    const expired = await shortClient.request('GET', '/v1/me', { headers: bearer });
    expect(expired.status).toBe(401);
    expectUsefulError(expired);
    expect(expired.headers['www-authenticate']).toMatch(/Bearer/);
    expect((await shortClient.request('GET', '/v1/lines', { headers: bearer })).status).toBe(401);
    expect(await streamStatus(token, shortLived.api.url)).toBe(401);
    // The expired session's row is deleted when it is next presented.
    expect(await shortLived.db.prisma.session.count({ where: { tokenHash: createHash('sha256').update(token).digest('hex') } })).toBe(0);
  });

  it('sign-out revokes the token for headers and the stream at once; other sessions of the user stay', async () => {
    const user = await createUserWithSession(world.api.app, { roles: ['QUALITY'] });
    const first = (await post('/v1/auth/login', { email: user.email, password: TEST_PASSWORD })).json.token as string;
    const second = (await post('/v1/auth/login', { email: user.email, password: TEST_PASSWORD })).json.token as string;
    expect((await client.request('POST', '/v1/auth/logout', { headers: { authorization: `Bearer ${first}` } })).status).toBe(204);
    expect((await client.request('GET', '/v1/me', { headers: { authorization: `Bearer ${first}` } })).status).toBe(401);
    expect(await streamStatus(first)).toBe(401);
    expect((await client.request('GET', '/v1/me', { headers: { authorization: `Bearer ${second}` } })).status).toBe(200);
  });
});

describe('API keys write only within their scope', () => {
  const recent = () => new Date(Date.now() - 60_000).toISOString();

  it('a LAB key posts no samples, load events or batches', async () => {
    const batch = await createBatchViaApi(world);
    const samples = await post(`/v1/equipment/${world.plant.bathId}/samples`, { samples: [{ channel: 'tc1', t: recent(), value: 370 }] }, world.labKey.headers);
    expect(samples.status).toBe(403);
    expectUsefulError(samples);
    expect((await post(`/v1/batches/${batch.id}/events`, { kind: 'CHARGED', at: recent(), equipmentId: world.plant.furnaceId }, world.labKey.headers)).status).toBe(403);
    expect((await post('/v1/batches', { code: 'LAB-BATCH', lineId: world.plant.lineId, heatId: world.plant.heatId, productSpecId: world.plant.specId, partCount: 1, weightKg: 1, sectionShape: 'PLATE', sectionSizeMm: 10 }, world.labKey.headers)).status).toBe(403);
    expect(await world.db.prisma.sample.count()).toBe(0);
    expect(await world.db.prisma.loadEvent.count({ where: { batchId: batch.id } })).toBe(0);
  });

  it('an EQUIPMENT key posts no heats, heat files or lab results, and reaches no admin endpoint', async () => {
    const batch = await createBatchViaApi(world);
    const key = world.bathKey.headers;
    expect((await post('/v1/heats', { heatNumber: 'H-EQ', material: 'STEEL', chemistryWtPct: { C: 0.5 } }, key)).status).toBe(403);
    expect((await client.request('POST', '/v1/heats/import', { headers: { ...key, 'content-type': 'text/csv' }, body: 'heatNumber,material,C\nH-EQ2,STEEL,0.5\n' })).status).toBe(403);
    expect((await post(`/v1/batches/${batch.id}/lab-results`, { kind: 'HARDNESS', scale: 'HBW', testStandard: 'ISO 6506-1', readings: [400], externalRef: 'EQ-1' }, key)).status).toBe(403);
    for (const path of ['/v1/api-keys', '/v1/users', '/v1/lines']) expect((await post(path, {}, key)).status, path).toBe(403);
    expect(await world.db.prisma.heat.count({ where: { heatNumber: { startsWith: 'H-EQ' } } })).toBe(0);
  });

  it('a furnace key reports no bath step, a bath key creates no batch, and a key of one line touches no batch of another', async () => {
    const batch = await createBatchViaApi(world);
    const intoBath = await post(`/v1/batches/${batch.id}/events`, { kind: 'INTO_BATH', at: recent(), equipmentId: world.plant.bathId }, world.furnaceKey.headers);
    expect(intoBath.status).toBe(403);
    expectUsefulError(intoBath);
    const bathCreates = await post('/v1/batches', { code: 'BATH-MADE', lineId: world.plant.lineId, heatId: world.plant.heatId, productSpecId: world.plant.specId, partCount: 1, weightKg: 1, sectionShape: 'PLATE', sectionSizeMm: 10 }, world.bathKey.headers);
    expect(bathCreates.status).toBe(403);

    const otherLine = await seedPlant(world.db.prisma);
    const otherFurnaceKey = await createApiKeyFor(world.api.app, { scope: 'EQUIPMENT', equipmentIds: [otherLine.furnaceId] });
    const foreign = await post(`/v1/batches/${batch.id}/events`, { kind: 'CHARGED', at: recent(), equipmentId: otherLine.furnaceId }, otherFurnaceKey.headers);
    expect(foreign.status).toBeGreaterThanOrEqual(400);
    expect(foreign.status).toBeLessThan(500);
    const foreignByOwnId = await post(`/v1/batches/${batch.id}/events`, { kind: 'CHARGED', at: recent(), equipmentId: world.plant.furnaceId }, otherFurnaceKey.headers);
    expect(foreignByOwnId.status).toBe(403);
    const foreignSamples = await post(`/v1/equipment/${world.plant.bathId}/samples`, { samples: [{ channel: 'tc1', t: recent(), value: 370 }] }, otherFurnaceKey.headers);
    expect(foreignSamples.status).toBe(403);
    expect(await world.db.prisma.loadEvent.count({ where: { batchId: batch.id } })).toBe(0);
    expect(await world.db.prisma.batch.count({ where: { code: 'BATH-MADE' } })).toBe(0);
  });

  it('a revoked key writes nothing anywhere (401 on every write endpoint)', async () => {
    const batch = await createBatchViaApi(world);
    const bath = await createApiKeyFor(world.api.app, { scope: 'EQUIPMENT', equipmentIds: [world.plant.bathId, world.plant.furnaceId] });
    const lab = await createApiKeyFor(world.api.app, { scope: 'LAB' });
    for (const key of [bath, lab]) expect((await post(`/v1/api-keys/${key.id}/revoke`, {}, world.admin.headers)).status).toBe(200);
    const attempts: Array<[string, Promise<RawReply>]> = [
      ['samples', post(`/v1/equipment/${world.plant.bathId}/samples`, { samples: [{ channel: 'tc1', t: recent(), value: 370 }] }, bath.headers)],
      ['event', post(`/v1/batches/${batch.id}/events`, { kind: 'CHARGED', at: recent(), equipmentId: world.plant.furnaceId }, bath.headers)],
      ['batch', post('/v1/batches', { code: 'REVOKED', lineId: world.plant.lineId, heatId: world.plant.heatId, productSpecId: world.plant.specId, partCount: 1, weightKg: 1, sectionShape: 'PLATE', sectionSizeMm: 10 }, bath.headers)],
      ['heat', post('/v1/heats', { heatNumber: 'H-REVOKED', material: 'STEEL', chemistryWtPct: { C: 0.5 } }, lab.headers)],
      ['lab result', post(`/v1/batches/${batch.id}/lab-results`, { kind: 'HARDNESS', scale: 'HBW', testStandard: 'ISO 6506-1', readings: [400], externalRef: 'REV-1' }, lab.headers)],
      ['X-Api-Key', client.request('POST', '/v1/heats', { headers: { 'x-api-key': lab.key, 'content-type': 'application/json' }, body: '{"heatNumber":"H-REVOKED2","material":"STEEL","chemistryWtPct":{"C":0.5}}' })],
    ];
    for (const [what, pending] of attempts) {
      const reply = await pending;
      expect(reply.status, what).toBe(401);
      expect(reply.json.message, what).toMatch(/unknown or revoked/);
    }
    expect(await world.db.prisma.sample.count()).toBe(0);
    expect(await world.db.prisma.loadEvent.count({ where: { batchId: batch.id } })).toBe(0);
    expect(await world.db.prisma.labResult.count({ where: { batchId: batch.id } })).toBe(0);
    expect(await world.db.prisma.heat.count({ where: { heatNumber: { startsWith: 'H-REVOKED' } } })).toBe(0);
  });
});

describe('sign-in throttling (brute force)', () => {
  it('limits failures per account and per address; 429 with Retry-After; success refills; malformed attempts do not count', { timeout: 180_000 }, async () => {
    // 3 failures per account, 12 per address, over an hour (so nothing refills during the test).
    const { api } = await startTestApi('login-throttle', { LOGIN_MAX_FAILURES_PER_ACCOUNT: 3, LOGIN_MAX_FAILURES_PER_IP: 12, LOGIN_FAILURE_WINDOW_MIN: 60, RATE_LIMIT_IP_PER_S: 0 } as object);
    const limited = new FuzzClient(api.url);
    try {
      const [a, b, c] = await Promise.all([1, 2, 3].map(() => createUserWithSession(api.app, { roles: ['QUALITY'] })));
      const login = (email: string, password: string) => limited.request('POST', '/v1/auth/login', { headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email, password }) });
      const statuses = async (email: string, password: string, n: number) => {
        const out: number[] = [];
        for (let i = 0; i < n; i++) out.push((await login(email, password)).status);
        return out;
      };

      expect((await login(b!.email, TEST_PASSWORD)).status).toBe(200); // address budget: 12 left

      // Account A: three wrong passwords, then locked, even for the right one.
      expect(await statuses(a!.email, 'wrong-password-1', 3)).toEqual([401, 401, 401]); // 9 left
      const locked = await login(a!.email, 'wrong-password-1');
      expect(locked.status).toBe(429);
      expectUsefulError(locked);
      expect(locked.json.message).toMatch(/^Too many failed sign-in attempts for this account; retry after \d+ s$/);
      expect(Number(locked.headers['retry-after'])).toBeGreaterThan(60); // one attempt back per 20 min
      expect((await login(a!.email.toUpperCase(), TEST_PASSWORD)).status).toBe(429); // same account, however typed

      // Account C: two failures, then success refills its allowance (three more failures before a lock).
      expect(await statuses(c!.email, 'wrong-password-2', 2)).toEqual([401, 401]); // 7 left
      expect((await login(c!.email, TEST_PASSWORD)).status).toBe(200);
      expect(await statuses(c!.email, 'wrong-password-3', 3)).toEqual([401, 401, 401]); // 4 left

      // Malformed sign-ins (400) do not count, for the account or the address.
      for (let i = 0; i < 5; i++) expect((await limited.request('POST', '/v1/auth/login', { headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email: b!.email }) })).status).toBe(400);

      // An unknown e-mail gets the same answers: no way to tell which accounts exist.
      expect(await statuses('ghost@plant.test', 'whatever-1', 3)).toEqual([401, 401, 401]); // 1 left
      const ghost = await login('ghost@plant.test', 'whatever-1');
      expect(ghost.status).toBe(429);
      expect(ghost.json.message.replace(/\d+ s$/, '')).toBe(locked.json.message.replace(/\d+ s$/, ''));

      // The address: one failure left, then even B's right password is refused from here.
      expect((await login(b!.email, 'wrong-password-4')).status).toBe(401); // 0 left
      const fromHere = await login(b!.email, TEST_PASSWORD);
      expect(fromHere.status).toBe(429);
      expect(fromHere.json.message).toMatch(/^Too many failed sign-in attempts from this address; retry after \d+ s$/);
    } finally {
      limited.close();
    }
  });

  it('parallel guesses are counted before the password check: 8 at once, at most 3 reach it', { timeout: 120_000 }, async () => {
    const { api } = await startTestApi('login-throttle-parallel', { LOGIN_MAX_FAILURES_PER_ACCOUNT: 3, LOGIN_MAX_FAILURES_PER_IP: 0, LOGIN_FAILURE_WINDOW_MIN: 60, RATE_LIMIT_IP_PER_S: 0 } as object);
    const limited = new FuzzClient(api.url);
    try {
      const user = await createUserWithSession(api.app, { roles: ['ADMIN'] });
      const replies = await Promise.all(
        Array.from({ length: 8 }, (_v, i) => limited.request('POST', '/v1/auth/login', { headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email: user.email, password: `guess-${i}-xxxxxxxx` }) })),
      );
      const counts = replies.reduce<Record<number, number>>((acc, r) => ({ ...acc, [r.status]: (acc[r.status] ?? 0) + 1 }), {});
      expect(counts).toEqual({ 401: 3, 429: 5 });
    } finally {
      limited.close();
    }
  });
});
