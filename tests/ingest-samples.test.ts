/**
 * POST /v1/equipment/:id/samples against the real Postgres and Redis: retries and duplicates store
 * nothing twice, bad input gets a 4xx naming the field and writes nothing, 10,000 samples go in one
 * request, Idempotency-Key replays and mismatches, and the recompute lands on the queue.
 */
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { afterAll, describe, expect, it } from 'vitest';
import { RECOMPUTE_QUEUE, recomputeDedupId } from '@ausline/contracts';
import { IN_FLIGHT_TAKEOVER_MS, requestFingerprint } from '../apps/api/src/ingest/idempotency.js';
import { createApiKeyFor } from '../apps/api/test/support/principals.js';
import { TEST_REDIS_URL } from './support/env.js';
import { countSamples, createBatchViaApi, postEvent, startIngestWorld, uniqueCode } from './ingest-fixtures.js';

const world = await startIngestWorld('ingest-samples');
const { http, plant, bathKey } = world;
const samplesPath = `/v1/equipment/${plant.bathId}/samples`;

/** Whole seconds in the recent past, so every test has its own non-overlapping times. */
let clockMs = Math.floor(Date.now() / 1000) * 1000 - 6 * 3_600_000;
function nextTimes(n: number, stepMs = 1000): number[] {
  const times = Array.from({ length: n }, (_, i) => clockMs + i * stepMs);
  clockMs += n * stepMs + 60_000;
  return times;
}

describe('samples: storing, retries and duplicates', () => {
  it('stores out-of-order samples and stores nothing the second time', async () => {
    const [t0, t1, t2] = nextTimes(3);
    const samples = [
      { channel: 'tc1', t: new Date(t2!).toISOString(), value: 371.2 },
      { channel: 'tc1', t: t0, value: 370.8 },
      { channel: 'tc2', t: new Date(t1!).toISOString().replace('Z', '+00:00'), value: 369.9 },
    ];
    const before = await countSamples(world);
    const first = await http.post(samplesPath, { samples }, bathKey.headers);
    expect(first.status).toBe(200);
    expect(first.body).toEqual({ stored: 3, duplicates: 0, conflicts: 0, rejected: 0, batchesQueued: 0 });
    expect(await countSamples(world)).toBe(before + 3);

    const again = await http.post(samplesPath, { samples }, bathKey.headers);
    expect(again.status).toBe(200);
    expect(again.body).toMatchObject({ stored: 0, duplicates: 3, conflicts: 0 });
    expect(await countSamples(world)).toBe(before + 3);
  });

  it('keeps the value as sent (0.1 °C resolution is not rounded away) under the same instant in any notation', async () => {
    const [t] = nextTimes(1);
    const iso = new Date(t!).toISOString();
    const plusTwo = new Date(t! + 2 * 3_600_000).toISOString().replace('Z', '+02:00');
    const r1 = await http.post(samplesPath, { samples: [{ channel: 'tc1', t: iso, value: 371.25 }] }, bathKey.headers);
    expect(r1.body.stored).toBe(1);
    // The same instant written with another offset and as epoch ms is the same key: a duplicate.
    const r2 = await http.post(samplesPath, { samples: [{ channel: 'tc1', t: plusTwo, value: 371.25 }, { channel: 'tc1', t: t!, value: 371.25 }] }, bathKey.headers);
    expect(r2.body).toMatchObject({ stored: 0, duplicates: 2 });
    const row = await world.db.prisma.sample.findUniqueOrThrow({ where: { channelId_t: { channelId: plant.tcIds[0], t: new Date(t!) } } });
    expect(row.value).toBe(371.25);
  });

  it('stores only the new part of an overlapping re-send', async () => {
    const times = nextTimes(5);
    const all = times.map((t, i) => ({ channel: 'tc1', t, value: 370 + i / 10 }));
    expect((await http.post(samplesPath, { samples: all.slice(0, 3) }, bathKey.headers)).body.stored).toBe(3);
    const overlap = await http.post(samplesPath, { samples: all.slice(1) }, bathKey.headers);
    expect(overlap.body).toMatchObject({ stored: 2, duplicates: 2 });
  });

  it('keeps the first value when a re-send carries another value for the same (channel, t), and counts it', async () => {
    const [t] = nextTimes(1);
    await http.post(samplesPath, { samples: [{ channel: 'tc2', t, value: 372.0 }] }, bathKey.headers);
    const changed = await http.post(samplesPath, { samples: [{ channel: 'tc2', t, value: 999.0 }] }, bathKey.headers);
    expect(changed.body).toMatchObject({ stored: 0, duplicates: 1, conflicts: 1 });
    const row = await world.db.prisma.sample.findUniqueOrThrow({ where: { channelId_t: { channelId: plant.tcIds[1], t: new Date(t!) } } });
    expect(row.value).toBe(372.0);
  });

  it('takes 10,000 samples in one request, and all of them are duplicates the second time', async () => {
    const times = nextTimes(5000);
    const samples = times.flatMap((t, i) => [
      { channel: 'tc1', t, value: 370 + Math.sin(i / 50) },
      { channel: 'tc2', t, value: 371 + Math.cos(i / 50) },
    ]);
    expect(samples).toHaveLength(10_000);
    const before = await countSamples(world);
    const started = performance.now();
    const first = await http.post(samplesPath, { samples }, bathKey.headers);
    const elapsedMs = performance.now() - started;
    expect(first.status).toBe(200);
    expect(first.body).toMatchObject({ stored: 10_000, duplicates: 0 });
    expect(await countSamples(world)).toBe(before + 10_000);
    // One set-based statement; a row-at-a-time insert of 10,000 rows takes far longer than this.
    expect(elapsedMs).toBeLessThan(10_000);

    const second = await http.post(samplesPath, { samples }, bathKey.headers);
    expect(second.body).toMatchObject({ stored: 0, duplicates: 10_000 });
    expect(await countSamples(world)).toBe(before + 10_000);
  });
});

describe('samples: bad input gets a 4xx naming the field, and nothing is written', () => {
  async function expectRefused(body: unknown, status: number, path: string, message?: RegExp) {
    const before = await countSamples(world);
    const reply = await http.post(samplesPath, body, bathKey.headers);
    expect(reply.status).toBe(status);
    expect(reply.body.issues.map((i: { path: string }) => i.path)).toContain(path);
    if (message) expect(reply.body.issues.find((i: { path: string }) => i.path === path).message).toMatch(message);
    expect(reply.body.message).toContain(path);
    expect(await countSamples(world)).toBe(before);
    return reply;
  }
  const good = () => nextTimes(3).map((t) => ({ channel: 'tc1', t, value: 370 }));

  it('a value that is not a number: 400 at samples.N.value', async () => {
    const samples = good();
    await expectRefused({ samples: [samples[0], samples[1], { ...samples[2], value: 'NaN' }] }, 400, 'samples.2.value', /expected.*number/);
    await expectRefused({ samples: [samples[0], { ...samples[1], value: null }] }, 400, 'samples.1.value');
    const { value: _v, ...noValue } = samples[0]!;
    await expectRefused({ samples: [noValue] }, 400, 'samples.0.value');
  });

  it('a time without offset, epoch seconds, or a wrong field name: 400 at that path', async () => {
    const samples = good();
    await expectRefused({ samples: [{ ...samples[0], t: '2026-03-01T08:00:00' }] }, 400, 'samples.0.t', /offset/);
    await expectRefused({ samples: [samples[0], { ...samples[1], t: Math.floor(samples[1]!.t / 1000) }] }, 400, 'samples.1.t', /seconds/);
    await expectRefused({ samples: [{ ...samples[0], val: 3 }] }, 400, 'samples.0.val', /unknown field/);
  });

  it('an unknown channel: 422 naming its index, the whole request refused', async () => {
    const samples = good();
    const reply = await expectRefused({ samples: [samples[0], samples[1], { ...samples[2], channel: 'tc9' }] }, 422, 'samples.2.channel', /unknown channel 'tc9'/);
    expect(reply.body.issues).toHaveLength(1);
  });

  it('a time too far in the future: 422 naming the index and the reason', async () => {
    const samples = good();
    const tenMinutesAhead = Date.now() + 10 * 60_000;
    await expectRefused({ samples: [samples[0], { ...samples[1], t: tenMinutesAhead }] }, 422, 'samples.1.t', /ahead of the server clock \(limit 5\.0 min\)/);
  });

  it('accepts a device clock slightly ahead (within SAMPLE_MAX_FUTURE_S)', async () => {
    const slightlyAhead = Math.floor((Date.now() + 60_000) / 1000) * 1000;
    const reply = await http.post(samplesPath, { samples: [{ channel: 'agitator', t: slightlyAhead, value: 120 }] }, bathKey.headers);
    expect(reply.status).toBe(200);
    expect(reply.body.stored).toBe(1);
  });

  it('two samples of one channel and time with different values in one request: 422', async () => {
    const [t] = nextTimes(1);
    await expectRefused({ samples: [{ channel: 'tc1', t, value: 370 }, { channel: 'tc1', t, value: 371 }] }, 422, 'samples.1.value', /samples\.0/);
  });

  it('more than 10,000 samples: 400 at samples; an empty list too', async () => {
    const [t] = nextTimes(1);
    await expectRefused({ samples: Array.from({ length: 10_001 }, (_, i) => ({ channel: 'tc1', t: t! + i, value: 1 })) }, 400, 'samples');
    await expectRefused({ samples: [] }, 400, 'samples');
  });

  it('malformed JSON: 400', async () => {
    const res = await fetch(`${world.api.url}${samplesPath}`, { method: 'POST', headers: { ...bathKey.headers, 'content-type': 'application/json' }, body: '{"samples": [NaN]}' });
    expect(res.status).toBe(400);
    expect(((await res.json()) as { message: string }).message).toMatch(/Malformed JSON/);
  });
});

describe('samples: Idempotency-Key', () => {
  it('replays the stored reply for the same key and body, and refuses the key with another body (422)', async () => {
    const samples = nextTimes(2).map((t) => ({ channel: 'tc2', t, value: 370.5 }));
    const key = `"${crypto.randomUUID()}"`;
    const headers = { ...bathKey.headers, 'idempotency-key': key };
    const first = await http.post(samplesPath, { samples }, headers);
    expect(first.status).toBe(200);
    expect(first.body).toMatchObject({ stored: 2 });
    expect(first.headers.get('idempotent-replayed')).toBeNull();

    const before = await countSamples(world);
    const replay = await http.post(samplesPath, { samples }, headers);
    expect(replay.status).toBe(200);
    // The stored reply, not a new computation (which would say stored 0, duplicates 2).
    expect(replay.body).toEqual(first.body);
    expect(replay.headers.get('idempotent-replayed')).toBe('true');
    expect(await countSamples(world)).toBe(before);

    const other = await http.post(samplesPath, { samples: [{ ...samples[0], value: 1 }] }, headers);
    expect(other.status).toBe(422);
    expect(other.body.issues[0].path).toBe('headers.Idempotency-Key');
    expect(await countSamples(world)).toBe(before);
  });

  it('treats the body as the same request whatever the key order of its objects', async () => {
    const [t] = nextTimes(1);
    const key = crypto.randomUUID();
    const headers = { ...bathKey.headers, 'idempotency-key': key };
    const first = await http.post(samplesPath, { samples: [{ channel: 'tc1', t, value: 1.5 }] }, headers);
    const reordered = await http.post(samplesPath, { samples: [{ value: 1.5, t, channel: 'tc1' }] }, headers);
    expect(reordered.status).toBe(200);
    expect(reordered.body).toEqual(first.body);
    expect(reordered.headers.get('idempotent-replayed')).toBe('true');
  });

  it('scopes keys to the caller: another controller key with the same key is processed on its own', async () => {
    const [t] = nextTimes(1);
    const otherKey = await createApiKeyFor(world.api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.bathId] });
    const key = crypto.randomUUID();
    const mine = await http.post(samplesPath, { samples: [{ channel: 'tc1', t, value: 2 }] }, { ...bathKey.headers, 'idempotency-key': key });
    expect(mine.body.stored).toBe(1);
    const theirs = await http.post(samplesPath, { samples: [{ channel: 'tc1', t: t! + 1000, value: 2 }] }, { ...otherKey.headers, 'idempotency-key': key });
    expect(theirs.status).toBe(200);
    expect(theirs.body.stored).toBe(1);
    expect(theirs.headers.get('idempotent-replayed')).toBeNull();
  });

  it('replays a stored 400; does not store a 422, so a retry after fixing the plant data goes through', async () => {
    const key = crypto.randomUUID();
    const headers = { ...bathKey.headers, 'idempotency-key': key };
    const bad = { samples: [{ channel: 'tc1', t: 'yesterday', value: 1 }] };
    expect((await http.post(samplesPath, bad, headers)).status).toBe(400);
    const replayed = await http.post(samplesPath, bad, headers);
    expect(replayed.status).toBe(400);
    expect(replayed.headers.get('idempotent-replayed')).toBe('true');
    expect(replayed.body.issues[0].path).toBe('samples.0.t');

    const [t] = nextTimes(1);
    const key2 = crypto.randomUUID();
    const headers2 = { ...bathKey.headers, 'idempotency-key': key2 };
    const body = { samples: [{ channel: 'level', t, value: 1200 }] };
    expect((await http.post(samplesPath, body, headers2)).status).toBe(422);
    await world.db.prisma.channel.create({ data: { equipmentId: plant.bathId, code: 'level', quantity: 'LEVEL_MM', role: 'BATH_LEVEL' } });
    const retried = await http.post(samplesPath, body, headers2);
    expect(retried.status).toBe(200);
    expect(retried.body.stored).toBe(1);
  });

  it('answers 409 while the first request with the key is still in flight, and takes over an abandoned one', async () => {
    const key = crypto.randomUUID();
    const body = { samples: nextTimes(1).map((t) => ({ channel: 'tc1', t, value: 1 })) };
    // A claim without a stored reply is what a request still being processed looks like.
    const scope = `apikey:${bathKey.id}`;
    const claim = await world.db.prisma.idempotencyRecord.create({
      data: { principal: scope, key, requestHash: requestFingerprint('POST', samplesPath, body), expiresAt: new Date(Date.now() + 3_600_000) },
    });
    const busy = await http.post(samplesPath, body, { ...bathKey.headers, 'idempotency-key': key });
    expect(busy.status).toBe(409);
    expect(busy.body.issues[0].path).toBe('headers.Idempotency-Key');

    // The first request died half-way (its process crashed): after IN_FLIGHT_TAKEOVER_MS a retry takes over.
    await world.db.prisma.idempotencyRecord.update({ where: { id: claim.id }, data: { createdAt: new Date(Date.now() - IN_FLIGHT_TAKEOVER_MS - 1000) } });
    const retried = await http.post(samplesPath, body, { ...bathKey.headers, 'idempotency-key': key });
    expect(retried.status).toBe(200);
    expect(retried.body.stored).toBe(1);
    const stored = await world.db.prisma.idempotencyRecord.findUniqueOrThrow({ where: { id: claim.id } });
    expect(stored.responseStatus).toBe(200);
  });

  it('refuses malformed keys with 400 naming the header', async () => {
    const samples = nextTimes(1).map((t) => ({ channel: 'tc1', t, value: 1 }));
    for (const key of ['short', '"unterminated', '"has\\x escape"']) {
      const reply = await http.post(samplesPath, { samples }, { ...bathKey.headers, 'idempotency-key': key });
      expect(reply.status).toBe(400);
      expect(reply.body.issues[0].path).toBe('headers.Idempotency-Key');
    }
  });
});

describe('samples: recompute of the batches they touch', () => {
  const queue = new Queue(RECOMPUTE_QUEUE, { connection: new Redis(TEST_REDIS_URL, { maxRetriesPerRequest: null }), prefix: world.config.QUEUE_PREFIX });
  afterAll(async () => {
    await queue.close();
  });

  it('queues one deduplicated recompute for a batch whose window covers the samples, none for samples outside', async () => {
    const batch = await createBatchViaApi(world, uniqueCode('LOAD-S'));
    const [charged] = nextTimes(1);
    expect((await postEvent(world, batch.id, 'CHARGED', charged!)).status).toBe(201);

    const inside = await http.post(
      samplesPath,
      { samples: [0, 1, 2].map((i) => ({ channel: 'tc1', t: charged! + 30_000 + i * 1000, value: 370 })) },
      bathKey.headers,
    );
    expect(inside.body).toMatchObject({ stored: 3, batchesQueued: 1 });
    const jobId = await queue.getDeduplicationJobId(recomputeDedupId(batch.id));
    expect(jobId).toBeTruthy();
    const job = await queue.getJob(jobId!);
    expect(job?.data).toMatchObject({ batchId: batch.id });

    // Hours before the load was charged: no batch of this line covers it.
    const before = await http.post(samplesPath, { samples: [{ channel: 'tc1', t: charged! - 3 * 3_600_000, value: 300 }] }, bathKey.headers);
    expect(before.body).toMatchObject({ stored: 1, batchesQueued: 0 });
    // A pure retry stores nothing and counts no batch as queued (it re-queues the covering batch, in case an
    // earlier attempt stored the rows and died before queueing; the queue folds that into the job above).
    const retry = await http.post(samplesPath, { samples: [0, 1, 2].map((i) => ({ channel: 'tc1', t: charged! + 30_000 + i * 1000, value: 370 })) }, bathKey.headers);
    expect(retry.body).toMatchObject({ stored: 0, batchesQueued: 0 });
    const row = await world.db.prisma.batch.findUniqueOrThrow({ where: { id: batch.id } });
    expect(row.stale).toBe(false);
  });
});

describe('samples: metrics', () => {
  it('counts stored, duplicate and rejected samples and ingest requests by outcome', async () => {
    const text = await (await fetch(`${world.api.url}/metrics`)).text();
    const value = (series: string) => Number(text.split('\n').find((l) => l.startsWith(series))?.split(' ').pop() ?? 'NaN');
    expect(value('ausline_ingest_samples_total{outcome="stored"}')).toBeGreaterThanOrEqual(10_000);
    expect(value('ausline_ingest_samples_total{outcome="duplicate"}')).toBeGreaterThanOrEqual(10_000);
    expect(value('ausline_ingest_samples_total{outcome="rejected"}')).toBeGreaterThan(0);
    expect(value('ausline_ingest_requests_total{kind="samples",outcome="accepted"}')).toBeGreaterThan(0);
    expect(value('ausline_ingest_requests_total{kind="samples",outcome="rejected"}')).toBeGreaterThan(0);
    expect(value('ausline_ingest_requests_total{kind="samples",outcome="duplicate"}')).toBeGreaterThan(0);
  });
});
