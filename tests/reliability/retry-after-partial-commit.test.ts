/**
 * Was a KNOWN GAP (coord/requests.md, R1 item 3; docs/reliability.md, weakness 2), pinned with `it.fails`
 * until the ingest path re-queued the covering batches on a request with duplicates (issue 7).
 *
 * A controller posts the last readings of a finished load. The api commits the rows, then dies (or loses
 * Postgres) before it queues the batch's recompute. The controller retries the same request: every
 * sample is now a duplicate, and a pure retry queues nothing, so the batch is neither queued nor marked
 * stale, and nothing else will recompute it (the reconciler re-evaluates only loads still in the bath).
 * Its stored result then misses those readings for good.
 *
 * The first attempt's commit-then-crash is simulated by writing its rows straight to the database; the
 * retry goes through the real api. The last test states what must hold; the preconditions are checked in
 * plain tests, so it cannot pass for a wrong reason.
 */
import { Queue } from 'bullmq';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { RECOMPUTE_QUEUE, recomputeDedupId } from '@ausline/contracts';
import { TEST_REDIS_URL } from '../support/env.js';
import { createBatchViaApi, postEvent, startIngestWorld, type Reply } from '../ingest-fixtures.js';

const world = await startIngestWorld('retry-after-partial-commit');
const queue = new Queue(RECOMPUTE_QUEUE, { connection: { url: TEST_REDIS_URL }, prefix: world.config.QUEUE_PREFIX });
afterAll(() => queue.close());

const MIN = 60_000;
let batchId = '';
let retry: Reply;
let queuedBeforeRetry: string | undefined;
let staleBeforeRetry = true;
let queuedAfterRetry: string | undefined;
let staleAfterRetry = false;

beforeAll(async () => {
  const batch = await createBatchViaApi(world);
  batchId = batch.id;
  const charged = Math.floor(Date.now() / 1000) * 1000 - 4 * 3_600_000;
  const intoBath = charged + 90 * MIN;
  const outOfBath = intoBath + 75 * MIN;
  for (const [kind, at] of [
    ['CHARGED', charged],
    ['OUT_OF_FURNACE', intoBath - 12_000],
    ['INTO_BATH', intoBath],
    ['OUT_OF_BATH', outOfBath],
  ] as const) {
    expect((await postEvent(world, batch.id, kind, at)).status).toBe(201);
  }
  // Whatever those events queued is done with (no worker runs here): start from an empty queue.
  await queue.obliterate({ force: true });
  queuedBeforeRetry = (await queue.getDeduplicationJobId(recomputeDedupId(batch.id))) ?? undefined;
  staleBeforeRetry = (await world.db.prisma.batch.findUniqueOrThrow({ where: { id: batch.id } })).stale;

  // The last minute of the hold, as the controller posts it.
  const samples = Array.from({ length: 12 }, (_, i) => ({ channel: 'tc1', t: outOfBath - MIN + i * 5_000, value: 370 + (i % 3) * 0.1 }));
  // First attempt: committed, then the api died before queueing anything.
  await world.db.prisma.sample.createMany({ data: samples.map((s) => ({ channelId: world.plant.tcIds[0], t: new Date(s.t), value: s.value })) });
  // The controller's retry.
  retry = await world.http.post(`/v1/equipment/${world.plant.bathId}/samples`, { samples }, world.bathKey.headers);
  queuedAfterRetry = (await queue.getDeduplicationJobId(recomputeDedupId(batch.id))) ?? undefined;
  staleAfterRetry = (await world.db.prisma.batch.findUniqueOrThrow({ where: { id: batch.id } })).stale;
});

describe('a retry after a committed but never queued first attempt', () => {
  it('is answered as a pure duplicate (the rows were stored once)', () => {
    expect(retry.status).toBe(200);
    expect(retry.body).toMatchObject({ stored: 0, duplicates: 12 });
  });

  it('starts from a batch with nothing queued and not marked stale', () => {
    expect(batchId).not.toBe('');
    expect(queuedBeforeRetry).toBeUndefined();
    expect(staleBeforeRetry).toBe(false);
  });

  it('gets the finished batch queued for a recompute or marked stale', () => {
    expect(queuedAfterRetry !== undefined || staleAfterRetry).toBe(true);
  });
});
