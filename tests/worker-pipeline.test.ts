/**
 * The recompute pipeline against real Postgres and Redis: a worker started in-process (startWorker), a
 * producer queue like the api's, and a live-event subscriber. The load, its bath log and its events are
 * seeded with Prisma directly; readings are invented.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { LiveEvent, RECOMPUTE_QUEUE, loadConfig, type RecomputeJob } from '@ausline/contracts';
import { DeviationRepository } from '@ausline/db';
import { PROCESS_WINDOW_RULES } from '@ausline/compliance';
import { startWorker, type RunningWorker } from '../apps/worker/src/start-worker.js';
import { WorkerLogger } from '../apps/worker/src/logger.js';
import { enqueueRecompute } from '../apps/worker/src/recompute/enqueue.js';
import { liveEventsChannel } from '../apps/worker/src/events/live-events.js';
import { RecomputeService } from '../apps/worker/src/recompute/recompute.service.js';
import { createTestDatabase } from './support/database.js';
import { TEST_REDIS_URL, deleteRedisKeys, testQueuePrefix } from './support/redis.js';
import { testAppEnv } from './support/env.js';
import { createBatch, createUser, furnaceZoneSamples, seedPlant, wiggle, writeLoadEvents } from './fixtures/austempering-plant.js';

const db = await createTestDatabase();
const prisma = db.prisma;
const prefix = testQueuePrefix('worker-pipeline');
const config = loadConfig(testAppEnv({ databaseUrl: db.url, queuePrefix: prefix }, { WORKER_CONCURRENCY: '2', SHUTDOWN_TIMEOUT_MS: '5000' }));

let worker: RunningWorker;
let queue: Queue<RecomputeJob>;
let subscriber: Redis;
const received: LiveEvent[] = [];

beforeAll(async () => {
  // The reconciler's interval is off: the tests run its passes themselves (reconcileOnce) to stay deterministic.
  worker = await startWorker(config, { metricsPort: 0, metricsHost: '127.0.0.1', aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') });
  queue = new Queue<RecomputeJob>(RECOMPUTE_QUEUE, { connection: { url: TEST_REDIS_URL }, prefix });
  subscriber = new Redis(TEST_REDIS_URL);
  await subscriber.subscribe(liveEventsChannel(prefix));
  subscriber.on('message', (_channel, text: string) => received.push(LiveEvent.parse(JSON.parse(text))));
});

afterAll(async () => {
  await worker?.close();
  await queue?.close();
  await subscriber?.quit();
  await deleteRedisKeys(prefix);
});

async function until<T>(what: string, probe: () => Promise<T | null | undefined | false>, timeoutMs = 15_000): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const value = await probe();
    if (value) return value;
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

/** Enqueues like the api and waits until the queue has finished one more job (completed or failed). */
async function recomputeAndWait(batchId: string, reason: RecomputeJob['reason'] = 'samples'): Promise<void> {
  const before = await queue.getJobCounts('completed', 'failed');
  await enqueueRecompute(queue, batchId, reason);
  await waitForMoreFinished(before);
}

async function waitForMoreFinished(before: Record<string, number>): Promise<void> {
  await until('the recompute to finish', async () => {
    const now = await queue.getJobCounts('completed', 'failed', 'active', 'waiting', 'delayed');
    return now.completed + now.failed > before.completed + before.failed && now.active + now.waiting + now.delayed === 0;
  });
}

const MIN = 60_000;
// The predicted verdicts (issue 4) of the fixture load have their own tests (tests/predictions*.test.ts): these
// assertions are about the process-window rules.
const processWindowOnly = { rule: { in: [...PROCESS_WINDOW_RULES] } };

/**
 * A finished ADI load, ending 20 minutes ago: furnace zones hold 900 °C (window 890–910 °C), 12 s
 * transfer, 90 min in the bath at 370 °C (window 360–380 °C), except tc1 at 386 °C for 4 minutes (allowed
 * 120 s continuous excursion) and a 90 s hole in tc2's log (allowed gap 30 s) that a late upload fills.
 */
async function seedLoad() {
  const plant = await seedPlant(prisma);
  const batch = await createBatch(prisma, plant);
  const outOfBath = Date.now() - 20 * MIN;
  const intoBath = outOfBath - 90 * MIN;
  const outOfFurnace = intoBath - 12_000;
  const charged = outOfFurnace - 90 * MIN;
  await writeLoadEvents(prisma, plant, batch.id, { charged, outOfFurnace, intoBath, outOfBath });
  const samples = furnaceZoneSamples(plant, charged, outOfFurnace);
  const excursion = { from: intoBath + 30 * MIN, to: intoBath + 34 * MIN };
  const hole = { from: intoBath + 50 * MIN, to: intoBath + 51.5 * MIN };
  const late: typeof samples = [];
  plant.tcIds.forEach((channelId, k) => {
    for (let t = intoBath - 2 * MIN, i = 0; t <= outOfBath + MIN; t += 10_000, i++) {
      const inExcursion = k === 0 && t >= excursion.from && t < excursion.to;
      const sample = { channelId, t: new Date(t), value: inExcursion ? 386 : 370 + wiggle(i, 2 + k) };
      if (k === 1 && t > hole.from && t < hole.to) late.push(sample);
      else samples.push(sample);
    }
  });
  await prisma.sample.createMany({ data: samples });
  return { plant, batch, late };
}

describe('worker pipeline: recompute -> deviations -> live events', () => {
  it('opens deviations, refreshes without duplicates, clears what late data resolves, and publishes events', async () => {
    const { plant, batch, late } = await seedLoad();

    // 1. First recompute: the excursion on tc1 and the hole in tc2's log.
    await recomputeAndWait(batch.id);
    const first = await prisma.deviation.findMany({ where: { batchId: batch.id, ...processWindowOnly }, orderBy: { rule: 'asc' } });
    expect(first.map((d) => [d.rule, d.channelId, d.status, d.severity])).toEqual([
      ['bath-band-excursion', plant.tcIds[0], 'OPEN', 'MAJOR'],
      ['channel-gap', plant.tcIds[1], 'OPEN', 'MAJOR'],
      // tc2 stayed at 370 °C meanwhile: the pair disagrees by 16 °C for those 4 minutes (tolerance 8 °C / 60 s)
      ['thermocouple-disagreement', null, 'OPEN', 'MINOR'],
    ]);
    const excursion = first[0];
    expect(excursion.message).toMatch(/^Bath thermocouple tc1 outside 360\.0–380\.0 °C for 240 s/);
    expect(excursion).toMatchObject({ lineId: plant.lineId, productSpecId: plant.specId, dedupKey: `${batch.id}:bath-band-excursion:${plant.tcIds[0]}` });
    expect(first[1].message).toContain('recorded nothing for 90 s');

    await until('live events of the first recompute', async () => received.filter((e) => e.type === 'deviation.changed').length >= 2);
    expect(received).toContainEqual(expect.objectContaining({ type: 'batch.updated', batchId: batch.id, lineId: plant.lineId }));
    expect(received).toContainEqual(
      expect.objectContaining({ type: 'deviation.changed', deviationId: excursion.id, rule: 'bath-band-excursion', status: 'OPEN', batchId: batch.id }),
    );

    // 2. Same data again: same rows, nothing rewritten, no new audit rows.
    await recomputeAndWait(batch.id);
    const second = await prisma.deviation.findMany({ where: { batchId: batch.id, ...processWindowOnly }, orderBy: { rule: 'asc' } });
    expect(second.map((d) => [d.id, d.version, d.status])).toEqual(first.map((d) => [d.id, 0, 'OPEN']));
    expect(second[0].lastEvaluatedAt.getTime()).toBeGreaterThan(first[0].lastEvaluatedAt.getTime());
    expect(await prisma.deviationAudit.count({ where: { deviation: { batchId: batch.id, ...processWindowOnly } } })).toBe(3);

    // 3. A metallurgist acknowledges the excursion; then the controller's late upload fills tc2's hole.
    const m = await createUser(prisma, ['METALLURGIST']);
    const ack = await new DeviationRepository(prisma).transition(excursion.id, { type: 'ACKNOWLEDGE' }, { kind: 'user', userId: m.id, label: m.email, roles: ['METALLURGIST'] });
    expect(ack.ok).toBe(true);
    await prisma.sample.createMany({ data: late });
    received.length = 0;
    await recomputeAndWait(batch.id);

    const third = await prisma.deviation.findMany({ where: { batchId: batch.id, ...processWindowOnly }, orderBy: { rule: 'asc' } });
    expect(third.map((d) => [d.rule, d.status, d.conditionPresent])).toEqual([
      ['bath-band-excursion', 'ACKNOWLEDGED', true],
      ['channel-gap', 'CLEARED', false],
      ['thermocouple-disagreement', 'OPEN', true],
    ]);
    const gapTrail = await prisma.deviationAudit.findMany({ where: { deviationId: third[1].id }, orderBy: { at: 'asc' } });
    expect(gapTrail.map((a) => `${a.action}:${a.fromStatus}->${a.toStatus}:${a.actor}`)).toEqual(['OPEN:null->OPEN:worker', 'CLEAR:OPEN->CLEARED:worker']);
    await until('the CLEARED event', async () => received.some((e) => e.type === 'deviation.changed' && e.status === 'CLEARED'));
    expect(received).toContainEqual(expect.objectContaining({ type: 'deviation.changed', deviationId: third[1].id, rule: 'channel-gap', status: 'CLEARED' }));
  });

  it('re-enqueues a stale batch from the reconciler and clears the flag after the recompute', async () => {
    const { batch } = await seedLoad();
    await prisma.$executeRaw`UPDATE "Batch" SET "stale" = true, "staleSince" = now() WHERE "id" = ${batch.id}::uuid`;

    const before = await queue.getJobCounts('completed', 'failed');
    const pass = await worker.reconcileOnce();
    expect(pass.stale).toBeGreaterThanOrEqual(1);
    await waitForMoreFinished(before);
    await until('the stale flag to clear', async () => !(await prisma.batch.findUniqueOrThrow({ where: { id: batch.id } })).stale);
    expect(await prisma.deviation.count({ where: { batchId: batch.id, ...processWindowOnly } })).toBe(3);
    expect((await prisma.batch.findUniqueOrThrow({ where: { id: batch.id } })).staleSince).toBeNull();
  });

  it('keeps the stale flag when it was set after the recompute started (data it may not have seen)', async () => {
    const { batch } = await seedLoad();
    // A flag stamped later than the recompute's start stands for data committed after the inputs were read.
    await prisma.$executeRaw`UPDATE "Batch" SET "stale" = true, "staleSince" = now() + interval '1 hour' WHERE "id" = ${batch.id}::uuid`;
    const out = await worker.app.get(RecomputeService).recompute(batch.id);
    expect(out.staleCleared).toBe(false);
    expect((await prisma.batch.findUniqueOrThrow({ where: { id: batch.id } })).stale).toBe(true);
    await prisma.$executeRaw`UPDATE "Batch" SET "staleSince" = now() - interval '1 second' WHERE "id" = ${batch.id}::uuid`;
    expect((await worker.app.get(RecomputeService).recompute(batch.id)).staleCleared).toBe(true);
  });

  it('re-evaluates a load still in the bath when time alone breaks a rule (controller gone silent)', async () => {
    const plant = await seedPlant(prisma);
    const batch = await createBatch(prisma, plant);
    const intoBath = Date.now() - 20 * MIN;
    const outOfFurnace = intoBath - 10_000;
    const charged = outOfFurnace - 70 * MIN;
    await prisma.loadEvent.createMany({
      data: [
        { batchId: batch.id, kind: 'CHARGED', at: new Date(charged), equipmentId: plant.furnaceId },
        { batchId: batch.id, kind: 'OUT_OF_FURNACE', at: new Date(outOfFurnace), equipmentId: plant.furnaceId },
        { batchId: batch.id, kind: 'INTO_BATH', at: new Date(intoBath), equipmentId: plant.bathId },
      ],
    });
    // Both bath thermocouples report for 5 minutes, then nothing: the trailing gap grows with time.
    const samples = plant.tcIds.flatMap((channelId, k) =>
      Array.from({ length: 31 }, (_, i) => ({ channelId, t: new Date(intoBath + i * 10_000), value: 370 + wiggle(i, k) })),
    );
    await prisma.sample.createMany({ data: samples });

    const before = await queue.getJobCounts('completed', 'failed');
    const pass = await worker.reconcileOnce();
    expect(pass.inProgress).toBeGreaterThanOrEqual(1);
    await waitForMoreFinished(before);
    const gaps = await until('channel-gap deviations', async () => {
      const rows = await prisma.deviation.findMany({ where: { batchId: batch.id, rule: 'channel-gap' } });
      return rows.length === 4 ? rows : null; // two furnace zones without any reading, two silent bath thermocouples
    });
    const bathGap = gaps.find((g) => g.channelId === plant.tcIds[0])!;
    expect(bathGap.message).toContain('(still silent)');
  });

  it('fails a job for an unknown batch at once, without retries', async () => {
    const before = await queue.getJobCounts('completed', 'failed');
    const job = await queue.add('recompute', { batchId: '00000000-0000-4000-8000-00000000abcd', reason: 'manual' }, { attempts: 5, backoff: { type: 'fixed', delay: 100 } });
    await waitForMoreFinished(before);
    const failed = await queue.getJob(job.id!);
    expect(failed?.failedReason).toContain('does not exist');
    expect(failed?.attemptsMade).toBe(1);
  });

  it('serves job durations on its metrics endpoint', async () => {
    expect(worker.metricsUrl).toMatch(/^http:\/\/127\.0\.0\.1:\d+$/);
    const text = await (await fetch(`${worker.metricsUrl}/metrics`)).text();
    const ok = /ausline_job_duration_seconds_count\{queue="recompute",outcome="ok"\} (\d+)/.exec(text);
    expect(Number(ok?.[1])).toBeGreaterThanOrEqual(3);
    expect(text).toMatch(/ausline_deviation_changes_total\{kind="opened"\} \d+/);
    expect((await fetch(`${worker.metricsUrl}/health`)).status).toBe(200);
  });
});
