/**
 * Graceful but bounded shutdown of the worker: a recompute that cannot finish (its batch lock is held
 * elsewhere) must not keep the process from closing longer than the configured budget.
 */
import { afterAll, describe, expect, it } from 'vitest';
import pg from 'pg';
import { Queue } from 'bullmq';
import { RECOMPUTE_QUEUE, loadConfig, type RecomputeJob } from '@ausline/contracts';
import { startWorker } from '../apps/worker/src/start-worker.js';
import { WorkerLogger } from '../apps/worker/src/logger.js';
import { enqueueRecompute } from '../apps/worker/src/recompute/enqueue.js';
import { createTestDatabase } from './support/database.js';
import { TEST_REDIS_URL, deleteRedisKeys, testQueuePrefix } from './support/redis.js';
import { testAppEnv } from './support/env.js';
import { createBatch, seedPlant } from './fixtures/austempering-plant.js';

const db = await createTestDatabase();
const prefix = testQueuePrefix('worker-shutdown');
const SHUTDOWN_TIMEOUT_MS = 1500;
const config = loadConfig(testAppEnv({ databaseUrl: db.url, queuePrefix: prefix }, { SHUTDOWN_TIMEOUT_MS: String(SHUTDOWN_TIMEOUT_MS) }));

afterAll(() => deleteRedisKeys(prefix));

describe('worker shutdown', () => {
  it('stops within its budget while a recompute is stuck, and a clean worker closes at once', async () => {
    const plant = await seedPlant(db.prisma);
    const batch = await createBatch(db.prisma, plant);
    const worker = await startWorker(config, { metricsPort: null, aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') });
    const queue = new Queue<RecomputeJob>(RECOMPUTE_QUEUE, { connection: { url: TEST_REDIS_URL }, prefix });
    // Hold the batch's recompute lock from another session, so the job blocks inside its transaction.
    const blocker = new pg.Client({ connectionString: db.url });
    await blocker.connect();
    try {
      await blocker.query(`SELECT pg_advisory_lock(hashtextextended($1, 0))`, [`ausline:recompute:${batch.id}`]);
      await enqueueRecompute(queue, batch.id, 'manual');
      const deadline = Date.now() + 10_000;
      while ((await queue.getJobCounts('active')).active === 0) {
        if (Date.now() > deadline) throw new Error('the job never became active');
        await new Promise((r) => setTimeout(r, 25));
      }
      const t0 = Date.now();
      await worker.close();
      const tookMs = Date.now() - t0;
      // Drains for 60 % of the budget, closes hard, gives the pool at most 25 %: inside the budget.
      expect(tookMs).toBeGreaterThanOrEqual(SHUTDOWN_TIMEOUT_MS * 0.6 - 50);
      expect(tookMs).toBeLessThan(SHUTDOWN_TIMEOUT_MS + 300);
    } finally {
      await blocker.end();
      await queue.close();
    }

    const idle = await startWorker(config, { metricsPort: null, aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') });
    const t1 = Date.now();
    await idle.close();
    expect(Date.now() - t1).toBeLessThan(SHUTDOWN_TIMEOUT_MS * 0.6);
  });
});
