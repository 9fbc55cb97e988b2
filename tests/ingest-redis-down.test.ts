/**
 * When Redis cannot be reached, ingest still succeeds (Postgres holds the data) and the affected
 * batch is marked stale, with staleSince from the database clock, for the worker's reconciler.
 * Redis is "down" by pointing the API at a port nothing listens on; the machine's Redis keeps running.
 */
import { createServer } from 'node:net';
import { describe, expect, it } from 'vitest';
import { createBatchViaApi, postEvent, startIngestWorld } from './ingest-fixtures.js';

async function closedPort(): Promise<number> {
  const server = createServer();
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const { port } = server.address() as { port: number };
  await new Promise<void>((resolve) => server.close(() => resolve()));
  return port;
}

const world = await startIngestWorld('ingest-redis-down', { REDIS_URL: `redis://127.0.0.1:${await closedPort()}` });
const { http, plant } = world;

async function staleOf(batchId: string) {
  return world.db.prisma.batch.findUniqueOrThrow({ where: { id: batchId }, select: { stale: true, staleSince: true } });
}

describe('ingest with Redis down', () => {
  it('records a load event, answers quickly and marks the batch stale', async () => {
    const batch = await createBatchViaApi(world);
    expect(await staleOf(batch.id)).toEqual({ stale: false, staleSince: null });

    const chargedMs = Date.now() - 3_600_000;
    const started = performance.now();
    const reply = await postEvent(world, batch.id, 'CHARGED', chargedMs);
    expect(reply.status).toBe(201);
    expect(performance.now() - started).toBeLessThan(2_000);

    const [{ dbNow }] = await world.db.prisma.$queryRaw<Array<{ dbNow: Date }>>`SELECT now() AS "dbNow"`;
    const after = await staleOf(batch.id);
    expect(after.stale).toBe(true);
    // Set by the database clock, moments ago.
    expect(after.staleSince).not.toBeNull();
    expect(Math.abs(dbNow.getTime() - after.staleSince!.getTime())).toBeLessThan(10_000);

    // The event itself is stored.
    const events = await world.db.prisma.loadEvent.findMany({ where: { batchId: batch.id } });
    expect(events.map((e) => e.kind)).toEqual(['CHARGED']);
  });

  it('stores samples, counts the batch as queued, marks it stale again, and moves staleSince forward', async () => {
    const batch = await createBatchViaApi(world);
    const chargedMs = Math.floor(Date.now() / 1000) * 1000 - 2 * 3_600_000;
    await postEvent(world, batch.id, 'CHARGED', chargedMs);
    const firstStale = await staleOf(batch.id);
    expect(firstStale.stale).toBe(true);

    // The reconciler would have run and cleared it; then new samples arrive while Redis is still away.
    await world.db.prisma.batch.update({ where: { id: batch.id }, data: { stale: false, staleSince: null } });
    const samples = [0, 1, 2].map((i) => ({ channel: 'zone1', t: chargedMs + 60_000 + i * 1000, value: 902 }));
    const started = performance.now();
    const reply = await http.post(`/v1/equipment/${plant.furnaceId}/samples`, { samples }, world.furnaceKey.headers);
    expect(reply.status).toBe(200);
    expect(reply.body).toMatchObject({ stored: 3, duplicates: 0, batchesQueued: 1 });
    expect(performance.now() - started).toBeLessThan(2_000);

    const again = await staleOf(batch.id);
    expect(again.stale).toBe(true);
    expect(again.staleSince!.getTime()).toBeGreaterThan(firstStale.staleSince!.getTime());
  });

  it('still answers 201 with the event stored when marking the batch stale fails too', async () => {
    const batch = await createBatchViaApi(world);
    // Postgres refuses the stale flag (and only that: the event's own write sets the status, not "stale"),
    // as if it went away between the event's commit and the flag.
    await world.db.pool.query(`
      CREATE FUNCTION refuse_stale_flag() RETURNS trigger LANGUAGE plpgsql AS $$
      BEGIN RAISE EXCEPTION 'stale flag refused by the test'; END $$;
      CREATE TRIGGER refuse_stale_flag BEFORE UPDATE OF "stale" ON "Batch"
        FOR EACH ROW EXECUTE FUNCTION refuse_stale_flag();`);
    try {
      const reply = await postEvent(world, batch.id, 'CHARGED', Date.now() - 3_600_000);
      expect(reply.status).toBe(201);
      expect(reply.body).toMatchObject({ outcome: 'created', batchStatus: 'IN_FURNACE' });
      const events = await world.db.prisma.loadEvent.findMany({ where: { batchId: batch.id } });
      expect(events.map((e) => e.kind)).toEqual(['CHARGED']);
      // The flag really was refused: the reply did not succeed because the update went through.
      expect(await staleOf(batch.id)).toEqual({ stale: false, staleSince: null });
    } finally {
      await world.db.pool.query('DROP TRIGGER refuse_stale_flag ON "Batch"; DROP FUNCTION refuse_stale_flag()');
    }
  });

  it('counts the failed enqueues in the metrics', async () => {
    const res = await fetch(`${world.api.url}/metrics`);
    const text = await res.text();
    const line = text.split('\n').find((l) => l.startsWith('ausline_recompute_enqueue_failures_total'));
    expect(line).toBeDefined();
    expect(Number(line!.split(' ').pop())).toBeGreaterThanOrEqual(2);
  });
});
