/**
 * The real Ausline service in-process for the simulator's integration tests: the API (createApiApp) and
 * the worker (startWorker) against a private test database and queue prefix, a first admin made with the
 * create-admin function and signed in over HTTP. The API can be stopped and started again on the same
 * port to play an outage.
 *
 *   const service = await startService('demo-day');      // top level of the test file; torn down afterAll
 *   await setupDemoPlant({ apiUrl: service.url, adminToken: service.adminToken });
 *   ... run the simulator against service.url ...
 *   await service.settle();                               // every recompute done
 */
import { afterAll } from 'vitest';
import { Queue } from 'bullmq';
import { DRIFT_QUEUE, OUTCOME_QUEUE, RECOMPUTE_QUEUE, loadConfig, type AppConfig } from '@ausline/contracts';
import { createApiApp, type ApiHandle } from '../../api/src/create-api-app.js';
import { createAdmin } from '../../api/src/cli/create-admin.js';
import { startWorker, type RunningWorker } from '../../worker/src/start-worker.js';
import { WorkerLogger } from '../../worker/src/logger.js';
import { createTestDatabase, type TestDatabase } from '../../../tests/support/database.js';
import { testAppEnv } from '../../../tests/support/env.js';
import { TEST_REDIS_URL, deleteRedisKeys, testQueuePrefix } from '../../../tests/support/redis.js';
import { ApiClient } from '../src/http.js';
import { FIRST_ADMIN } from '../src/plant.js';

export interface Service {
  db: TestDatabase;
  config: AppConfig;
  /** Base URL; stays the same across stopApi/startApi. */
  readonly url: string;
  adminToken: string;
  /** Closes the API (the worker keeps running): requests now fail with connection refused. */
  stopApi(): Promise<void>;
  /** Starts the API again on the same port. */
  startApi(): Promise<void>;
  /** Waits until the recompute queue is empty and no batch is stale (several quiet checks in a row). */
  settle(timeoutMs?: number): Promise<void>;
  /** settle(), then also the follow-up queues (outcome: charted values and lab comparisons; drift: the charts)
   *  quiet for a few seconds in a row, longer than the worker's sweep interval. */
  settleFollowUps(timeoutMs?: number): Promise<void>;
}

export async function startService(label: string, overrides: Record<string, string> = {}): Promise<Service> {
  const db = await createTestDatabase();
  const prefix = testQueuePrefix(label);
  const config = loadConfig(
    testAppEnv({ databaseUrl: db.url, queuePrefix: prefix }, { LOG_LEVEL: 'silent', WORKER_CONCURRENCY: '2', RECONCILE_INTERVAL_S: '2', ...overrides }),
  );
  let api: ApiHandle | null = await createApiApp(config);
  const port = Number(new URL(api.url).port);
  const url = api.url;
  const worker: RunningWorker = await startWorker(config, { metricsPort: null, aliveFile: null, reconcile: true, logger: new WorkerLogger('silent') });
  const queue = new Queue(RECOMPUTE_QUEUE, { connection: { url: TEST_REDIS_URL }, prefix });
  const followUps = [OUTCOME_QUEUE, DRIFT_QUEUE].map((name) => new Queue(name, { connection: { url: TEST_REDIS_URL }, prefix }));
  const busyIn = async (q: Queue) => Object.values(await q.getJobCounts('active', 'waiting', 'delayed', 'prioritized', 'waiting-children')).reduce((a, b) => a + b, 0);

  const admin = await createAdmin(db.prisma, { email: FIRST_ADMIN.email, displayName: FIRST_ADMIN.displayName });
  if (!admin.ok) throw new Error(`create-admin refused: ${admin.reason}`);
  const login = await new ApiClient(url).post<{ token: string }>('/v1/auth/login', { email: admin.email, password: admin.oneTimePassword });

  afterAll(async () => {
    await api?.close();
    await worker.close();
    await queue.close();
    for (const q of followUps) await q.close();
    await deleteRedisKeys(prefix);
  });

  const service: Service = {
    db,
    config,
    url,
    adminToken: login.token,
    async stopApi() {
      await api?.close();
      api = null;
    },
    async startApi() {
      api ??= await createApiApp(config, { port });
    },
    async settle(timeoutMs = 120_000) {
      const deadline = Date.now() + timeoutMs;
      let quiet = 0;
      while (quiet < 4) {
        if (Date.now() > deadline) throw new Error('the worker did not settle in time');
        const counts = await queue.getJobCounts('active', 'waiting', 'delayed', 'prioritized', 'waiting-children');
        const busy = Object.values(counts).reduce((a, b) => a + b, 0);
        const [{ stale }] = await db.prisma.$queryRaw<Array<{ stale: number }>>`SELECT count(*)::int AS stale FROM "Batch" WHERE "stale"`;
        quiet = busy === 0 && stale === 0 ? quiet + 1 : 0;
        await new Promise((r) => setTimeout(r, 250));
      }
    },
    async settleFollowUps(timeoutMs = 300_000) {
      const deadline = Date.now() + timeoutMs;
      await service.settle(timeoutMs);
      let quietSince = Date.now();
      const quietMs = Math.max(3_000, 2 * config.RECONCILE_INTERVAL_S * 1000);
      while (Date.now() - quietSince < quietMs) {
        if (Date.now() > deadline) throw new Error('the outcome and drift queues did not settle in time');
        let busy = await busyIn(queue);
        for (const q of followUps) busy += await busyIn(q);
        if (busy > 0) quietSince = Date.now();
        await new Promise((r) => setTimeout(r, 250));
      }
    },
  };
  return service;
}
