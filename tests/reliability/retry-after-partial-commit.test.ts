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
 * The first attempt's commit-then-crash is simulated by writing its rows straight to the database (samples)
 * or by a real post whose queued job is then removed (load event, lab result: the same state as a commit
 * whose enqueue never happened); the retry goes through the real api. The last test of each block states
 * what must hold; the preconditions are checked in plain tests, so it cannot pass for a wrong reason.
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

/** What the queue and the batch row say about a batch's recompute right now. */
async function queuedOrStale(id: string): Promise<{ queued: string | undefined; stale: boolean }> {
  const queued = (await queue.getDeduplicationJobId(recomputeDedupId(id))) ?? undefined;
  const { stale } = await world.db.prisma.batch.findUniqueOrThrow({ where: { id } });
  return { queued, stale };
}

/** A first attempt that committed, then never queued: its write is stored and the queue is emptied. */
async function halfDone(id: string, firstAttempt: () => Promise<Reply>): Promise<{ first: Reply; before: Awaited<ReturnType<typeof queuedOrStale>> }> {
  const first = await firstAttempt();
  await queue.obliterate({ force: true });
  return { first, before: await queuedOrStale(id) };
}

describe('a load event retried after a committed but never queued first attempt', () => {
  let first: Reply;
  let before: Awaited<ReturnType<typeof queuedOrStale>>;
  let again: Reply;
  let after: Awaited<ReturnType<typeof queuedOrStale>>;
  let eventsStored = 0;

  beforeAll(async () => {
    const batch = await createBatchViaApi(world);
    const charged = Math.floor(Date.now() / 1000) * 1000 - 3_600_000;
    ({ first, before } = await halfDone(batch.id, () => postEvent(world, batch.id, 'CHARGED', charged)));
    again = await postEvent(world, batch.id, 'CHARGED', charged);
    after = await queuedOrStale(batch.id);
    eventsStored = await world.db.prisma.loadEvent.count({ where: { batchId: batch.id } });
  });

  it('stored the event once and answers the retry as unchanged', () => {
    expect(first.status).toBe(201);
    expect(again.status).toBe(200);
    expect(again.body).toMatchObject({ outcome: 'unchanged', batchStatus: 'IN_FURNACE' });
    expect(eventsStored).toBe(1);
  });

  it('starts from a batch with nothing queued and not marked stale', () => {
    expect(before).toEqual({ queued: undefined, stale: false });
  });

  it('gets the batch queued for a recompute', () => {
    expect(after.queued).toBeDefined();
  });
});

describe('a lab result retried after a committed but never queued first attempt', () => {
  // 341-444 HBW is the typical hardness of ASTM A897 grade 3 (practice.md §1.4, A897-16 Table 1).
  const hardness = { kind: 'HARDNESS', scale: 'HBW', testStandard: 'ISO 6506-1', readings: [388, 392, 401], externalRef: 'LAB-RETRY-1' };
  let first: Reply;
  let before: Awaited<ReturnType<typeof queuedOrStale>>;
  let again: Reply;
  let after: Awaited<ReturnType<typeof queuedOrStale>>;
  let conflicting: Reply;
  let afterConflict: Awaited<ReturnType<typeof queuedOrStale>>;

  beforeAll(async () => {
    const batch = await createBatchViaApi(world);
    const post = (body: object) => world.http.post(`/v1/batches/${batch.id}/lab-results`, body, world.labKey.headers);
    ({ first, before } = await halfDone(batch.id, () => post(hardness)));
    again = await post(hardness);
    after = await queuedOrStale(batch.id);
    // A refused write (other values under the same reference) queues nothing.
    await queue.obliterate({ force: true });
    conflicting = await post({ ...hardness, readings: [388, 392, 402] });
    afterConflict = await queuedOrStale(batch.id);
  });

  it('stored the result once and answers the retry as unchanged', () => {
    expect(first.status).toBe(201);
    expect(again.status).toBe(200);
    expect(again.body).toMatchObject({ outcome: 'unchanged', labResult: { externalRef: 'LAB-RETRY-1' } });
  });

  it('starts from a batch with nothing queued and not marked stale', () => {
    expect(before).toEqual({ queued: undefined, stale: false });
  });

  it('gets the batch queued for a recompute', () => {
    expect(after.queued).toBeDefined();
  });

  it('queues nothing for a conflicting write', () => {
    expect(conflicting.status).toBe(409);
    expect(afterConflict).toEqual({ queued: undefined, stale: false });
  });
});
