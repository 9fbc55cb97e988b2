/**
 * An Idempotency-Key attempt cut off by a PostgreSQL outage must not block its retries
 * (docs/reliability.md, weakness 1, fixed in issue 7).
 *
 * Before the fix, the claim an attempt had committed could not be released while Postgres was away, and
 * every retry with the key was answered 409 until IN_FLIGHT_TAKEOVER_MS (60 s) had passed. Now:
 *  - samples claim the key inside their write transaction, so an attempt that dies leaves no claim;
 *  - every other idempotent endpoint (here a load event) releases its claim when the attempt fails, and
 *    when Postgres cannot be reached for that, the api lets the next attempt of the key take the claim
 *    over at once and keeps trying to release it in the background.
 *
 * Each case blocks the attempt inside the database (a row lock it must wait for), waits until the
 * api's backend is waiting on that lock, stops a private PostgreSQL cluster in immediate mode (crash-like),
 * starts it again and retries with the same key like a controller: every 5xx or connection error is
 * retried, a 409 is recorded. It checks that no retry got a 409, that the write is stored exactly once,
 * and that a further retry replays the stored reply.
 */
import { fileURLToPath } from 'node:url';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '@ausline/contracts';
import { createPrismaClient, type PrismaClient } from '@ausline/db';
import { runMigrations } from '../../libs/db/src/migrate/run-migrations.js';
import { createApiApp, type ApiHandle } from '../../apps/api/src/create-api-app.js';
import { createApiKeyFor, type TestKey } from '../../apps/api/test/support/principals.js';
import { createBatch, seedPlant, type SeededPlant } from '../fixtures/austempering-plant.js';
import { TEST_REDIS_URL, testQueuePrefix } from '../support/redis.js';
import { startOwnPostgres, type OwnPostgres } from './support/own-services.js';

const MIGRATIONS_DIR = fileURLToPath(new URL('../../prisma/migrations', import.meta.url));
/** Retries stop after this long; the old behaviour answered 409 for 60 s, so any 409 shows up well before. */
const RETRY_FOR_MS = 45_000;

let pgServer: OwnPostgres | undefined;
let api: ApiHandle | undefined;
let prisma: PrismaClient;
let databaseUrl = '';
let plant: SeededPlant;
let furnaceKey: TestKey;
let bathKey: TestKey;

beforeAll(async () => {
  pgServer = await startOwnPostgres();
  const admin = new pg.Client({ connectionString: pgServer.urlFor('postgres') });
  await admin.connect();
  await admin.query('CREATE DATABASE ausline');
  await admin.end();
  databaseUrl = pgServer.urlFor('ausline');
  await runMigrations(databaseUrl, MIGRATIONS_DIR);
  api = await createApiApp(
    loadConfig({
      DATABASE_URL: databaseUrl,
      REDIS_URL: TEST_REDIS_URL,
      QUEUE_PREFIX: testQueuePrefix('idempotency-outage'),
      PORT: '0',
      LOG_LEVEL: 'silent',
      PLANT_TIME_ZONE: 'UTC',
    }),
  );
  prisma = createPrismaClient(databaseUrl, { maxConnections: 2 });
  plant = await seedPlant(prisma);
  [furnaceKey, bathKey] = await Promise.all([
    createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.furnaceId] }),
    createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.bathId] }),
  ]);
}, 300_000);

afterAll(async () => {
  await api?.close().catch(() => {});
  await prisma?.$disconnect().catch(() => {});
  await pgServer?.destroy().catch(() => {});
}, 60_000);

interface Attempt {
  status: number | 'network';
  body: unknown;
  replayed: boolean;
}

async function post(path: string, body: unknown, headers: Record<string, string>): Promise<Attempt> {
  try {
    const res = await fetch(`${api!.url}${path}`, { method: 'POST', headers: { 'content-type': 'application/json', ...headers }, body: JSON.stringify(body) });
    const text = await res.text();
    return { status: res.status, body: text ? JSON.parse(text) : null, replayed: res.headers.get('idempotent-replayed') === 'true' };
  } catch {
    return { status: 'network', body: null, replayed: false };
  }
}

/** Retries like a controller until the attempt is answered with a final status (not 5xx, not 409, not a network error). */
async function retryUntilAnswered(path: string, body: unknown, headers: Record<string, string>): Promise<{ final: Attempt; seen: Array<Attempt['status']> }> {
  const seen: Array<Attempt['status']> = [];
  const stopAt = Date.now() + RETRY_FOR_MS;
  for (;;) {
    const attempt = await post(path, body, headers);
    seen.push(attempt.status);
    const retryable = attempt.status === 'network' || attempt.status === 409 || attempt.status >= 500;
    if (!retryable || Date.now() > stopAt) return { final: attempt, seen };
    await new Promise((resolve) => setTimeout(resolve, 250));
  }
}

/**
 * Runs `blockSql` in an open transaction (row locks the attempt will wait on), starts `send()`, waits
 * until the api's backend waits on a lock, then stops Postgres in immediate mode (the attempt fails),
 * and starts it again. Returns the cut-off attempt.
 */
async function cutOffByOutage(blockSql: string, params: unknown[], send: () => Promise<Attempt>): Promise<Attempt> {
  const locker = new pg.Client({ connectionString: databaseUrl });
  // pg_stat_activity is a snapshot per transaction: watch from a connection of its own, outside the locker's.
  const watcher = new pg.Client({ connectionString: databaseUrl });
  for (const c of [locker, watcher]) {
    c.on('error', () => {});
    await c.connect();
  }
  await locker.query('BEGIN');
  await locker.query(blockSql, params);
  const lockerPid = (await locker.query<{ pid: number }>('SELECT pg_backend_pid() AS pid')).rows[0]!.pid;
  let finished: Attempt | undefined;
  const attempt = send().then((a) => (finished = a));
  const waitUntil = Date.now() + 60_000;
  for (;;) {
    const { rows } = await watcher.query<{ n: number }>(
      `SELECT count(*)::int AS n FROM pg_stat_activity WHERE datname = current_database() AND pid <> $1 AND wait_event_type = 'Lock'`,
      [lockerPid],
    );
    if (rows[0]!.n > 0) break;
    if (finished) throw new Error(`the attempt was answered before it reached the lock: ${JSON.stringify(finished)}`);
    if (Date.now() > waitUntil) {
      const activity = await watcher.query(`SELECT pid, state, wait_event_type, wait_event, left(query, 80) AS query FROM pg_stat_activity WHERE datname = current_database()`);
      throw new Error(`the attempt never waited on the lock: ${JSON.stringify(activity.rows)}`);
    }
    await new Promise((resolve) => setTimeout(resolve, 50));
  }
  await pgServer!.stop('immediate');
  const cutOff = await attempt;
  await locker.end().catch(() => {});
  await watcher.end().catch(() => {});
  await pgServer!.start();
  return cutOff;
}

describe('a retry after an attempt cut off by a Postgres outage', () => {
  it('samples: the retry is processed at once (no 409), stores every sample once, and is then replayed', async () => {
    const t0 = Math.floor(Date.now() / 1000) * 1000 - 3_600_000;
    const samples = Array.from({ length: 50 }, (_, i) => ({ channel: i % 2 ? 'tc2' : 'tc1', t: t0 + Math.floor(i / 2) * 1000, value: 370 + i / 10 }));
    const path = `/v1/equipment/${plant.bathId}/samples`;
    const headers = { ...bathKey.headers, 'idempotency-key': `"${crypto.randomUUID()}"` };

      // The attempt waits on an uncommitted row with the key of its last sample.
    const last = samples.at(-1)!;
    const cutOff = await cutOffByOutage(
      `INSERT INTO "Sample" ("channelId", "t", "value") VALUES ($1::uuid, $2, $3)`,
      [plant.tcIds[1], new Date(last.t), last.value],
      () => post(path, { samples }, headers),
    );
    expect(cutOff.status === 'network' || (typeof cutOff.status === 'number' && cutOff.status >= 500)).toBe(true);

    const { final, seen } = await retryUntilAnswered(path, { samples }, headers);
    expect(seen).not.toContain(409);
    expect(final.status).toBe(200);
    expect(final.body).toMatchObject({ stored: 50, duplicates: 0 });
    expect(await prisma.sample.count({ where: { channelId: { in: [plant.tcIds[0]!, plant.tcIds[1]!] }, t: { gte: new Date(t0) } } })).toBe(50);

    const again = await post(path, { samples }, headers);
    expect(again.status).toBe(200);
    expect(again.replayed).toBe(true);
    expect(again.body).toEqual(final.body);
  }, 240_000);

  it('a load event: the failed attempt’s claim does not block the retry (no 409), the event is stored once, then replayed', async () => {
    const batch = await createBatch(prisma, plant);
    const at = Math.floor(Date.now() / 1000) * 1000 - 2 * 3_600_000;
    const path = `/v1/batches/${batch.id}/events`;
    const body = { kind: 'CHARGED', at, equipmentId: plant.furnaceId };
    const headers = { ...furnaceKey.headers, 'idempotency-key': `"${crypto.randomUUID()}"` };

    // The attempt waits on the batch row (the event's transaction locks it FOR UPDATE).
    const cutOff = await cutOffByOutage(`SELECT 1 FROM "Batch" WHERE "id" = $1::uuid FOR UPDATE`, [batch.id], () => post(path, body, headers));
    expect(cutOff.status === 'network' || (typeof cutOff.status === 'number' && cutOff.status >= 500)).toBe(true);

    const { final, seen } = await retryUntilAnswered(path, body, headers);
    expect(seen).not.toContain(409);
    expect(final.status).toBe(201);
    expect(await prisma.loadEvent.count({ where: { batchId: batch.id } })).toBe(1);

    const again = await post(path, body, headers);
    expect(again.status).toBe(201);
    expect(again.replayed).toBe(true);
  }, 240_000);
});
