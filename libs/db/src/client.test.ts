import { afterAll, describe, expect, it } from 'vitest';
import pg from 'pg';
import { PrismaPg } from '@prisma/adapter-pg';
import { createTestDatabase } from '../../../tests/support/database.js';
import { createBatch, seedPlant } from '../../../tests/fixtures/austempering-plant.js';
import { SerialPgClient, createPrismaClient } from './client.js';
import { PrismaClient } from './generated/prisma/client.js';

const db = await createTestDatabase();
const plant = await seedPlant(db.prisma);
const batch = await createBatch(db.prisma, plant);

/** Counts pg queries started on a connection that is still busy with another (what pg 8.19+ warns about). */
function overlapCounter(): { overlaps: () => number; restore: () => void } {
  const original = pg.Client.prototype.query;
  let overlaps = 0;
  pg.Client.prototype.query = function (this: pg.Client & { _activeQuery: unknown; _queryQueue: unknown[] }, ...args: unknown[]) {
    if (this._activeQuery || this._queryQueue.length > 0) overlaps++;
    return (original as (...a: unknown[]) => unknown).apply(this, args);
  } as typeof original;
  return { overlaps: () => overlaps, restore: () => void (pg.Client.prototype.query = original) };
}

/** A read of one batch with four relations, inside an interactive transaction (as the worker's recompute does). */
const readInTransaction = (prisma: PrismaClient) =>
  prisma.$transaction(async (tx) =>
    tx.batch.findUnique({
      where: { id: batch.id },
      select: { id: true, heat: { select: { id: true } }, line: { select: { id: true } }, specVersion: { select: { id: true } }, loadEvents: { select: { id: true } } },
    }),
  );

describe('createPrismaClient', () => {
  const counter = overlapCounter();
  const plain = new PrismaClient({ adapter: new PrismaPg({ connectionString: db.url, max: 2 }) });
  const serial = createPrismaClient(db.url, { maxConnections: 2 });
  afterAll(async () => {
    counter.restore();
    await plain.$disconnect();
    await serial.$disconnect();
  });

  it('control: Prisma loads the relations of one read concurrently on the transaction connection (adapter-pg 7.10)', async () => {
    const before = counter.overlaps();
    for (let i = 0; i < 5; i++) expect((await readInTransaction(plain))?.id).toBe(batch.id);
    expect(counter.overlaps() - before).toBeGreaterThan(0);
  });

  it('queues them on its connections instead: same results, never two queries at once on one connection', async () => {
    const before = counter.overlaps();
    for (let i = 0; i < 5; i++) {
      const row = await readInTransaction(serial);
      expect(row).toMatchObject({ id: batch.id, heat: { id: batch.heatId }, line: { id: plant.lineId }, specVersion: { id: batch.specVersionId }, loadEvents: [] });
    }
    // Outside a transaction too (pool queries), and many transactions at once on a small pool.
    await Promise.all(Array.from({ length: 6 }, () => readInTransaction(serial)));
    expect(await serial.batch.count({ where: { id: batch.id } })).toBe(1);
    expect(counter.overlaps() - before).toBe(0);
  });

  it('SerialPgClient: queries given at once run in order, one at a time; a failed one does not stop those behind it', async () => {
    const client = new SerialPgClient({ connectionString: db.url });
    await client.connect();
    try {
      const before = counter.overlaps();
      const [first, failed, last] = await Promise.allSettled([client.query('SELECT 1 AS x'), client.query('SELECT 1/0 AS x'), client.query('SELECT 3 AS x')]);
      expect(first).toMatchObject({ status: 'fulfilled', value: { rows: [{ x: 1 }] } });
      expect(failed).toMatchObject({ status: 'rejected', reason: { message: 'division by zero' } });
      expect(last).toMatchObject({ status: 'fulfilled', value: { rows: [{ x: 3 }] } });
      expect(counter.overlaps() - before).toBe(0);
    } finally {
      await client.end();
    }
  });
});
