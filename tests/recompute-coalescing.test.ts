/**
 * Coalescing of a batch's recomputes (issue 7; libs/contracts recomputeJobOptions), against the real Postgres, Redis,
 * API and worker:
 *  - a burst of posts to one batch while its recompute is active (held on the batch's advisory lock, so "slow" for as
 *    long as the test wants, not for a guessed time) runs exactly two recomputes of that batch — the one that was
 *    active and one after it — and the final prediction covers the last reading posted;
 *  - the same with the worker SIGKILLed while that recompute is active and the burst is held back for after it: the
 *    job is run again by a new worker, the follow-up after it, and the last reading still reaches the prediction.
 * The posts are 300 ms apart, longer than the old 250 ms debounce (ttl, extend, replace): with those options the
 * first test found 7 jobs of the batch waiting behind the held one after the 8 posts.
 * Every plant, heat and reading is invented (tests/predictions-support.ts).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import pg from 'pg';
import { Queue, type Job } from 'bullmq';
import { RECOMPUTE_QUEUE, recomputeDedupId, type AcceptanceCriteria, type PredictionRow } from '@ausline/contracts';
import { buildWorker, spawnWorker, type WorkerProcess } from './reliability/support/own-services.js';
import { bathReadings, createSpec, expectStatus, postBath, postHeat, postLoad, startPredictionWorld, waitForPrediction, BOLT_STEEL, type LoadPlan } from './predictions-support.js';
import { databaseUrlFor } from './support/env.js';
import { TEST_REDIS_URL } from './support/redis.js';

const w = await startPredictionWorld('recompute-coalescing');
const CRITERIA: AcceptanceCriteria = { minBainiteFraction: 0.35, requireCompleteTransformation: true, maxFreshMartensiteFraction: 0.5, hardness: { scale: 'HRC', min: 44, max: 60 } };
const MIN = 60_000;
const BURST = 8;

const queue = new Queue(RECOMPUTE_QUEUE, { connection: { url: TEST_REDIS_URL }, prefix: w.queuePrefix });
const lockClient = new pg.Client({ connectionString: databaseUrlFor((await w.prisma.$queryRaw<{ db: string }[]>`SELECT current_database() AS db`)[0]!.db) });
await lockClient.connect();
const children: WorkerProcess[] = [];
afterAll(async () => {
  for (const c of children) await c.kill('SIGKILL').catch(() => undefined);
  await queue.close();
  await lockClient.end();
});

let heatNumber: string;
let specCode: string;
beforeAll(async () => {
  heatNumber = (await postHeat(w, BOLT_STEEL)).heatNumber;
  specCode = (await createSpec(w, { criteria: CRITERIA })).code;
}, 120_000);

async function waitFor(what: string, check: () => Promise<boolean>, timeoutMs: number): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!(await check())) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

const jobsOf = async (batchId: string, states: Array<'active' | 'waiting' | 'delayed' | 'completed' | 'failed'>): Promise<Job[]> =>
  (await queue.getJobs(states, 0, 1000)).filter((j) => (j.data as { batchId?: string }).batchId === batchId);

/** Nothing of the batch left in the queue: no job active, waiting or delayed, no deduplication key, nothing kept aside. */
async function settled(batchId: string): Promise<boolean> {
  return (await jobsOf(batchId, ['active', 'waiting', 'delayed'])).length === 0 && (await queue.getDeduplicationJobId(recomputeDedupId(batchId))) === null;
}

/** A load in the bath with 10 minutes logged, predicted, and the queue quiet for it. */
async function loadInBath(): Promise<{ plan: LoadPlan; batchId: string }> {
  const plan: LoadPlan = { plant: await w.plant(), slot: 1, heatNumber, specCode, bathC: 335, holdMin: 90, loggedMin: 10 };
  const { batchId } = await postLoad(w, plan);
  await waitForPrediction(w, batchId, { phase: 'IN_BATH', loggedUntilS: 10 * 60 });
  await waitFor('the queue to be quiet for the batch', () => settled(batchId), 60_000);
  return { plan, batchId };
}

/**
 * Holds the batch's recompute lock, posts one minute of readings and waits until its recompute is active (blocked on
 * the lock inside its transaction); then posts BURST more minutes, one post every 300 ms. Returns when the first
 * post was sent (the queue was quiet for the batch before: the jobs run from then on are counted) and the last minute.
 */
async function burstWhileActive(plan: LoadPlan, batchId: string): Promise<{ sinceMs: number; lastMin: number }> {
  const lockKey = `ausline:recompute:${batchId}`;
  await lockClient.query('SELECT pg_advisory_lock(hashtextextended($1, 0))', [lockKey]);
  const slice = (fromMin: number) => bathReadings(plan, fromMin, fromMin + 1).filter((s) => s.t > loadStart(plan) + fromMin * MIN);
  const sinceMs = Date.now();
  await postBath(w, plan, slice(10));
  await waitFor('the recompute to be active', async () => (await jobsOf(batchId, ['active'])).length === 1, 30_000);
  for (let i = 1; i <= BURST; i++) {
    await new Promise((r) => setTimeout(r, 300));
    await postBath(w, plan, slice(10 + i));
  }
  // While one is active, nothing of the batch waits as a job: the latest add is kept aside for after it.
  expect(await jobsOf(batchId, ['waiting', 'delayed'])).toHaveLength(0);
  expect(await jobsOf(batchId, ['active'])).toHaveLength(1);
  return { sinceMs, lastMin: 11 + BURST };
}

const loadStart = (plan: LoadPlan) => bathReadings(plan, 0, 0)[0]!.t;
const releaseLock = (batchId: string) => lockClient.query('SELECT pg_advisory_unlock(hashtextextended($1, 0))', [`ausline:recompute:${batchId}`]);

describe('recompute coalescing', () => {
  it('a burst of posts while the batch is recomputed runs two recomputes, and the last one predicts over the last reading', async () => {
    const { plan, batchId } = await loadInBath();
    const { sinceMs, lastMin } = await burstWhileActive(plan, batchId);
    await releaseLock(batchId);

    const rows: PredictionRow[] = await waitForPrediction(w, batchId, { phase: 'IN_BATH', loggedUntilS: lastMin * 60 });
    await waitFor('the queue to be quiet for the batch', () => settled(batchId), 60_000);
    expect(rows[0]!.result.bainite.loggedUntilS).toBe(lastMin * 60);

    const runs = (await jobsOf(batchId, ['completed', 'failed'])).filter((j) => j.processedOn! >= sinceMs).sort((a, b) => a.processedOn! - b.processedOn!);
    expect(runs.map((j) => j.finishedOn !== undefined && j.failedReason === undefined)).toEqual([true, true]);
    // The held recompute saw the successor queued and left the prediction to it; the successor predicted.
    expect(runs.map((j) => (j.returnvalue as { predictionDeferred: boolean }).predictionDeferred)).toEqual([true, false]);
    expect((runs[1]!.returnvalue as { prediction: { kind: string } | null }).prediction?.kind).toMatch(/^(inserted|updated)$/);
    expect((await w.prisma.batch.findUniqueOrThrow({ where: { id: batchId } })).stale).toBe(false);
  }, 240_000);

  it('nothing is lost when the worker is killed while the recompute runs and the burst waits for it', async () => {
    // From here on the worker runs as built child processes (as in production), so it can be SIGKILLed.
    const build = buildWorker();
    await w.worker.close();
    const env = {
      DATABASE_URL: databaseUrlFor((await w.prisma.$queryRaw<{ db: string }[]>`SELECT current_database() AS db`)[0]!.db),
      REDIS_URL: TEST_REDIS_URL,
      QUEUE_PREFIX: w.queuePrefix,
      LOG_LEVEL: 'warn',
      PLANT_TIME_ZONE: 'UTC',
      WORKER_CONCURRENCY: '2',
      RECONCILE_INTERVAL_S: '3600',
      SHUTDOWN_TIMEOUT_MS: '3000',
      WORKER_METRICS_PORT: '0',
    };
    const first = spawnWorker(env);
    children.push(first);
    const { plan, batchId } = await loadInBath();
    const { sinceMs, lastMin } = await burstWhileActive(plan, batchId);
    await first.kill('SIGKILL');
    await releaseLock(batchId);
    children.push(spawnWorker(env));

    // The killed job keeps its place until its lock expires (30 s), is run again, then the follow-up.
    const rows = await waitForPrediction(w, batchId, { phase: 'IN_BATH', loggedUntilS: lastMin * 60 }, 150_000).catch((error: unknown) => {
      throw new Error(`${String(error)}\nworker build: ${build.typeErrors ?? 'ok'}\nworker output:\n${children.flatMap((c) => c.output).join('').slice(-3000)}`);
    });
    await waitFor('the queue to be quiet for the batch', () => settled(batchId), 60_000);
    expect(rows[0]!.result.bainite.loggedUntilS).toBe(lastMin * 60);
    const runs = (await jobsOf(batchId, ['completed', 'failed'])).filter((j) => j.processedOn! >= sinceMs);
    expect(runs.every((j) => j.failedReason === undefined)).toBe(true);
    expect(runs.length).toBeLessThanOrEqual(2);
    expect((await w.prisma.batch.findUniqueOrThrow({ where: { id: batchId } })).stale).toBe(false);
  }, 400_000);
});
