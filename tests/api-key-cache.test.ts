/**
 * The api caches the principal of an API key that authenticated (apps/api/src/auth/api-key-cache.ts) and
 * must forget it on every change to a key, whoever makes the change: checked against the real Postgres
 * (the trigger of migration 20261202009100_api_key_notify and LISTEN/NOTIFY).
 */
import { afterAll, describe, expect, it } from 'vitest';
import type { Principal } from '../apps/api/src/auth/access.js';
import { ApiKeyCache } from '../apps/api/src/auth/api-key-cache.js';
import { createApiKeyFor } from '../apps/api/test/support/principals.js';
import { startIngestWorld } from './ingest-fixtures.js';

const world = await startIngestWorld('api-key-cache');
afterAll(() => world.api.close());

/** Polls until `check` holds; bounded, and not a timing assertion (the bound is far above the expected milliseconds). */
async function eventually(check: () => Promise<boolean>, boundMs = 15_000): Promise<boolean> {
  const stopAt = Date.now() + boundMs;
  while (Date.now() < stopAt) {
    if (await check()) return true;
    await new Promise((resolve) => setTimeout(resolve, 50));
  }
  return check();
}

const principal: Principal = { kind: 'apiKey', keyId: '00000000-0000-4000-8000-000000000001', scope: 'EQUIPMENT', equipmentIds: [], prefix: 'ak_000000000000' };

describe('ApiKeyCache against Postgres', () => {
  it('serves a key from memory while it listens, and looks it up again after any change to a key', async () => {
    const cache = new ApiKeyCache(world.config.DATABASE_URL, 'silent');
    await cache.start();
    try {
      expect(cache.active).toBe(true);
      let lookups = 0;
      const lookup = async () => {
        lookups += 1;
        return principal;
      };
      await cache.get('k', lookup);
      await cache.get('k', lookup);
      expect(lookups).toBe(1);

      // A change made straight in the database (another api instance, a script): the trigger notifies.
      await world.db.prisma.$executeRaw`UPDATE "ApiKey" SET "label" = "label" WHERE "id" = ${world.labKey.id}::uuid`;
      expect(
        await eventually(async () => {
          await cache.get('k', lookup);
          return lookups > 1;
        }),
      ).toBe(true);
    } finally {
      await cache.stop();
    }
  });

  it('does not cache while its LISTEN connection is down, and caches again once it is back', async () => {
    const cache = new ApiKeyCache(world.config.DATABASE_URL, 'silent');
    await cache.start();
    try {
      let lookups = 0;
      const lookup = async () => {
        lookups += 1;
        return principal;
      };
      // End the listening backend from the server side, as a Postgres restart would.
      await world.db.prisma.$executeRaw`
        SELECT pg_terminate_backend(pid) FROM pg_stat_activity
        WHERE datname = current_database() AND pid <> pg_backend_pid() AND query = 'LISTEN ausline_api_keys'`;
      expect(await eventually(async () => !cache.active, 10_000)).toBe(true);
      await cache.get('k', lookup);
      await cache.get('k', lookup);
      expect(lookups).toBe(2);
      expect(await eventually(async () => cache.active)).toBe(true);
      await cache.get('k', lookup);
      await cache.get('k', lookup);
      expect(lookups).toBe(3);
    } finally {
      await cache.stop();
    }
  });
});

describe('the api with the cache', () => {
  it('refuses a key revoked straight in the database (not through this api) once the change is committed', async () => {
    const key = await createApiKeyFor(world.api.app, { scope: 'EQUIPMENT', equipmentIds: [world.plant.bathId] });
    expect((await world.http.get('/v1/me', key.headers)).status).toBe(200);
    expect((await world.http.get('/v1/me', key.headers)).status).toBe(200); // now from the cache
    await world.db.prisma.$executeRaw`UPDATE "ApiKey" SET "revokedAt" = now() WHERE "id" = ${key.id}::uuid`;
    expect(await eventually(async () => (await world.http.get('/v1/me', key.headers)).status === 401)).toBe(true);
  });

  it('refuses a key whose equipment scope was removed straight in the database', async () => {
    const key = await createApiKeyFor(world.api.app, { scope: 'EQUIPMENT', equipmentIds: [world.plant.bathId] });
    const path = `/v1/equipment/${world.plant.bathId}/samples`;
    const body = { samples: [{ channel: 'tc1', t: Math.floor(Date.now() / 1000) * 1000 - 3_600_000, value: 370 }] };
    expect((await world.http.post(path, body, key.headers)).status).toBe(200);
    await world.db.prisma.apiKeyEquipment.deleteMany({ where: { apiKeyId: key.id } });
    expect(await eventually(async () => (await world.http.post(path, body, key.headers)).status === 403)).toBe(true);
  });

  it('never lets a wrong secret in on a cached key’s prefix', async () => {
    const key = await createApiKeyFor(world.api.app, { scope: 'LAB' });
    expect((await world.http.get('/v1/me', key.headers)).status).toBe(200);
    const wrong = `${key.prefix}.${'x'.repeat(43)}`;
    expect((await world.http.get('/v1/me', { authorization: `ApiKey ${wrong}` })).status).toBe(401);
  });
});
