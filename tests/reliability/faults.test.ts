/**
 * Reliability under faults (issue 7, item 3). A private PostgreSQL and a private Redis (own ports and
 * data directories: restarting them disturbs nothing else on the machine), the api in this process, and
 * the worker as child processes from its build (`node apps/worker/dist/main.js`, as in production).
 *
 * Load: 4 lines, each a furnace controller and a bath controller replaying one finished load at about
 * 140× real time (readings every 5 s: 2 furnace zones, 2 bath thermocouples and an agitator; five minutes of
 * readings per request; load events as they happen). Each controller keeps an outbox and retries a
 * request with the same Idempotency-Key until it is acknowledged. Line 0's load has a planted bath
 * excursion (tc1 at 386 °C for 4 min, window 360–380 °C, 120 s allowed), so deviations exist to duplicate.
 *
 * Faults while the load runs: the worker SIGKILLed three times (the first two certainly mid-job: the job
 * waits on its batch's recompute lock, which the test holds), Redis stopped and started again (graceful
 * stop, append-only file on, as docker-compose.yml runs it), PostgreSQL stopped in immediate mode (no
 * checkpoint: crash recovery on start) and started again. A new worker is started after every kill, as
 * an orchestrator would.
 *
 * Then: every sample sent is stored exactly once with its value; every load event once; no controller
 * ended with anything refused or unsent; no deviation duplicated (one row per dedupKey and per
 * batch/rule/channel, one OPEN audit each); no recompute failed for good; and every batch's stored
 * result equals a clean recompute: recomputing now changes nothing, and a from-scratch recompute of a
 * copy of the database without any results (no deviations, no predictions) finds the same deviations
 * (and the same latest prediction, once the worker computes predictions).
 *
 * All readings are invented. Sized to run in about two to four minutes.
 */
import os from 'node:os';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import pg from 'pg';
import { Queue, QueueEvents } from 'bullmq';
import { RECOMPUTE_QUEUE, loadConfig, type AppConfig, type RecomputeJob } from '@ausline/contracts';
import { createPrismaClient, type PrismaClient } from '@ausline/db';
import { runMigrations } from '../../libs/db/src/migrate/run-migrations.js';
import { createApiApp, type ApiHandle } from '../../apps/api/src/create-api-app.js';
import { createApiKeyFor } from '../../apps/api/test/support/principals.js';
import { startWorker } from '../../apps/worker/src/start-worker.js';
import { WorkerLogger } from '../../apps/worker/src/logger.js';
import { RecomputeService } from '../../apps/worker/src/recompute/recompute.service.js';
import { createBatch, seedPlant, type SeededPlant } from '../fixtures/austempering-plant.js';
import { RetryingController } from './support/controllers.js';
import { buildWorker, spawnWorker, startOwnPostgres, startOwnRedis, type OwnPostgres, type OwnRedis, type WorkerProcess } from './support/own-services.js';

const MIGRATIONS_DIR = fileURLToPath(new URL('../../prisma/migrations', import.meta.url));
const LINES = 4;
const SAMPLE_PERIOD_MS = 5_000;
// Five minutes of readings per request: about 2 requests/s in all, which one worker keeps up with on a busy
// 2-core machine. (Recomputes are coalesced per batch, at most one active and one waiting, so posting faster
// costs latency, not a pile of jobs; throughput is measured by bench/recompute.ts, not what this test is about.)
const CHUNK_MS = 5 * 60_000;
const REPLAY_WALL_MS = 60_000;
const MIN = 60_000;
const QUEUE_PREFIX = 'ausline-rel';

let pgServer: OwnPostgres | undefined;
let redis: OwnRedis | undefined;
let api: ApiHandle | undefined;
let prisma: PrismaClient;
let config: AppConfig;
let databaseUrl: string;
const workers: WorkerProcess[] = [];
let currentWorker: WorkerProcess | undefined;
let buildNote = '';

function workerEnv(): Record<string, string> {
  return {
    DATABASE_URL: databaseUrl,
    REDIS_URL: redis!.url,
    QUEUE_PREFIX,
    LOG_LEVEL: 'warn',
    PLANT_TIME_ZONE: 'UTC',
    WORKER_CONCURRENCY: '2',
    RECONCILE_INTERVAL_S: '2',
    SHUTDOWN_TIMEOUT_MS: '3000',
    WORKER_METRICS_PORT: '0',
  };
}

function startChildWorker(): WorkerProcess {
  const w = spawnWorker(workerEnv());
  workers.push(w);
  currentWorker = w;
  return w;
}

beforeAll(async () => {
  const build = buildWorker();
  buildNote = `worker build ${build.seconds.toFixed(1)} s${build.typeErrors ? ` (with type errors elsewhere, output emitted):\n${build.typeErrors}` : ''}`;
  pgServer = await startOwnPostgres();
  redis = await startOwnRedis();
  const admin = new pg.Client({ connectionString: pgServer.urlFor('postgres') });
  await admin.connect();
  await admin.query('CREATE DATABASE ausline');
  await admin.end();
  databaseUrl = pgServer.urlFor('ausline');
  await runMigrations(databaseUrl, MIGRATIONS_DIR);
  config = loadConfig({
    DATABASE_URL: databaseUrl,
    REDIS_URL: redis.url,
    QUEUE_PREFIX,
    PORT: '0',
    LOG_LEVEL: 'silent',
    PLANT_TIME_ZONE: 'UTC',
    RECONCILE_INTERVAL_S: '2',
    SHUTDOWN_TIMEOUT_MS: '3000',
  });
  api = await createApiApp(config);
  prisma = createPrismaClient(databaseUrl, { maxConnections: 4 });
}, 420_000);

afterAll(async () => {
  for (const w of workers) await w.kill('SIGKILL').catch(() => {});
  await api?.close().catch(() => {});
  await prisma?.$disconnect().catch(() => {});
  await redis?.destroy().catch(() => {});
  await pgServer?.destroy().catch(() => {});
}, 60_000);

// ---- the invented loads ----------------------------------------------------------------------------

interface LineLoad {
  plant: SeededPlant;
  batchId: string;
  charged: number;
  outOfFurnace: number;
  intoBath: number;
  outOfBath: number;
  furnace: RetryingController;
  bath: RetryingController;
}

const wiggle = (i: number, phase: number) => Math.round(300 * Math.sin(i * 0.7 + phase)) / 1000;

function furnaceValue(tMs: number, charged: number, i: number, zone: number): number {
  const since = tMs - charged;
  const base = since < 15 * MIN ? 700 + (200 * since) / (15 * MIN) : 900;
  return Math.round((base + wiggle(i, zone)) * 1000) / 1000;
}

function bathValue(tMs: number, load: LineLoad, i: number, tc: number, planted: boolean): number {
  const inExcursion = planted && tc === 0 && tMs >= load.intoBath + 30 * MIN && tMs < load.intoBath + 34 * MIN;
  return inExcursion ? 386 : Math.round((370 + wiggle(i, 2 + tc)) * 1000) / 1000;
}

/** channelId@tMs -> value, for every sample a controller was asked to send. */
const sent = new Map<string, number>();
/** batchId -> kind -> at (ms) */
const sentEvents = new Map<string, Map<string, number>>();
const faultLog: string[] = [];
let stalledEvents = 0;

function log(line: string): void {
  faultLog.push(`${new Date().toISOString().slice(11, 23)} ${line}`);
}

async function waitFor<T>(what: string, probe: () => Promise<T | null | undefined | false>, timeoutMs: number, everyMs = 50): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const value = await probe().catch(() => null);
    if (value) return value;
    if (Date.now() > deadline) throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}\n${faultLog.join('\n')}`);
    await new Promise((r) => setTimeout(r, everyMs));
  }
}

describe('reliability under faults: worker kills, Redis and Postgres restarts, retrying controllers', () => {
  it('loses nothing, duplicates nothing, and ends with results equal to a clean recompute', async () => {
    const baseUrl = api!.url;
    const queue = new Queue<RecomputeJob>(RECOMPUTE_QUEUE, { connection: { url: redis!.url, maxRetriesPerRequest: 1 }, prefix: QUEUE_PREFIX });
    queue.on('error', () => {});
    const queueEvents = new QueueEvents(RECOMPUTE_QUEUE, { connection: { url: redis!.url }, prefix: QUEUE_PREFIX });
    queueEvents.on('error', () => {});
    queueEvents.on('stalled', () => stalledEvents++);
    await queueEvents.waitUntilReady();
    const lockClient = new pg.Client({ connectionString: databaseUrl });
    lockClient.on('error', () => {});

    try {
      // ---- plant: 4 lines, keys scoped to each controller's equipment, one batch per line -------------
      const now = Math.floor(Date.now() / 1000) * 1000;
      const loads: LineLoad[] = [];
      for (let l = 0; l < LINES; l++) {
        const plant = await seedPlant(prisma);
        const batch = await createBatch(prisma, plant);
        const [furnaceKey, bathKey] = await Promise.all([
          createApiKeyFor(api!.app, { scope: 'EQUIPMENT', equipmentIds: [plant.furnaceId] }),
          createApiKeyFor(api!.app, { scope: 'EQUIPMENT', equipmentIds: [plant.bathId] }),
        ]);
        const charged = now - 175 * MIN + l * 2 * MIN;
        const outOfFurnace = charged + 85 * MIN;
        const intoBath = outOfFurnace + 12_000;
        const outOfBath = intoBath + 75 * MIN;
        loads.push({
          plant,
          batchId: batch.id,
          charged,
          outOfFurnace,
          intoBath,
          outOfBath,
          furnace: new RetryingController({ name: `furnace${l}`, baseUrl, authorization: furnaceKey.headers.authorization! }),
          bath: new RetryingController({ name: `bath${l}`, baseUrl, authorization: bathKey.headers.authorization! }),
        });
      }
      const bathChannels = async (plant: SeededPlant) =>
        (await prisma.channel.findMany({ where: { equipmentId: plant.bathId }, orderBy: { code: 'asc' } })).map((c) => ({ id: c.id, code: c.code }));

      // ---- what each controller will send, in plant time order ---------------------------------------
      type Planned = { atPlantMs: number; controller: RetryingController; path: string; body: unknown };
      const planned: Planned[] = [];
      const plantStart = Math.min(...loads.map((x) => x.charged));
      const plantEnd = Math.max(...loads.map((x) => x.outOfBath));
      for (const [l, load] of loads.entries()) {
        const event = (controller: RetryingController, kind: string, at: number, equipmentId: string) => {
          const byKind = sentEvents.get(load.batchId) ?? new Map<string, number>();
          byKind.set(kind, at);
          sentEvents.set(load.batchId, byKind);
          planned.push({ atPlantMs: at, controller, path: `/v1/batches/${load.batchId}/events`, body: { kind, at, equipmentId } });
        };
        event(load.furnace, 'CHARGED', load.charged, load.plant.furnaceId);
        for (let from = load.charged; from < load.outOfFurnace; from += CHUNK_MS) {
          const samples: Array<{ channel: string; t: number; value: number }> = [];
          for (let t = from, i = (from - load.charged) / SAMPLE_PERIOD_MS; t < Math.min(from + CHUNK_MS, load.outOfFurnace + 1); t += SAMPLE_PERIOD_MS, i++) {
            load.plant.zoneIds.forEach((channelId, z) => {
              const value = furnaceValue(t, load.charged, i, z);
              samples.push({ channel: `zone${z + 1}`, t, value });
              sent.set(`${channelId}@${t}`, value);
            });
          }
          planned.push({ atPlantMs: from + CHUNK_MS, controller: load.furnace, path: `/v1/equipment/${load.plant.furnaceId}/samples`, body: { samples } });
        }
        event(load.furnace, 'OUT_OF_FURNACE', load.outOfFurnace, load.plant.furnaceId);
        event(load.bath, 'INTO_BATH', load.intoBath, load.plant.bathId);
        const channels = await bathChannels(load.plant);
        for (let from = load.intoBath; from < load.outOfBath; from += CHUNK_MS) {
          const samples: Array<{ channel: string; t: number; value: number }> = [];
          for (let t = from, i = (from - load.intoBath) / SAMPLE_PERIOD_MS; t < Math.min(from + CHUNK_MS, load.outOfBath + 1); t += SAMPLE_PERIOD_MS, i++) {
            for (const ch of channels) {
              const value = ch.code === 'agitator' ? 600 + wiggle(i, 7) : bathValue(t, load, i, ch.code === 'tc1' ? 0 : 1, l === 0);
              samples.push({ channel: ch.code, t, value });
              sent.set(`${ch.id}@${t}`, value);
            }
          }
          planned.push({ atPlantMs: from + CHUNK_MS, controller: load.bath, path: `/v1/equipment/${load.plant.bathId}/samples`, body: { samples } });
        }
        event(load.bath, 'OUT_OF_BATH', load.outOfBath, load.plant.bathId);
      }
      planned.sort((a, b) => a.atPlantMs - b.atPlantMs);
      const speed = (plantEnd - plantStart) / REPLAY_WALL_MS;

      // ---- run: the replay, the controllers and the faults, all bounded --------------------------------
      startChildWorker();
      const controllers = loads.flatMap((x) => [x.furnace, x.bath]);
      const machineAtStart = `machine at the start: ${os.availableParallelism()} CPUs, ${Math.round(os.totalmem() / 2 ** 30)} GiB, load average ${os.loadavg().map((x) => x.toFixed(2)).join(' / ')}`;
      const loadStart = Date.now();
      const drainDeadline = loadStart + REPLAY_WALL_MS + 150_000;
      const running = controllers.map((c) => c.run(drainDeadline));
      const replay = (async () => {
        for (const p of planned) {
          const dueWall = loadStart + (p.atPlantMs - plantStart) / speed;
          const wait = dueWall - Date.now();
          if (wait > 0) await new Promise((r) => setTimeout(r, wait));
          p.controller.send({ path: p.path, body: p.body });
        }
        for (const c of controllers) c.close();
      })();
      const at = (sinceStartMs: number) => new Promise((r) => setTimeout(r, Math.max(0, loadStart + sinceStartMs - Date.now())));

      const killWorker = async (label: string) => {
        const w = currentWorker!;
        await w.kill('SIGKILL');
        log(`${label}: worker ${w.pid} SIGKILLed`);
        const next = startChildWorker();
        log(`worker ${next.pid} started`);
      };

      const killMidJob = async (batchId: string, label: string) => {
        const lockKey = `ausline:recompute:${batchId}`;
        await lockClient.query('SELECT pg_advisory_lock(hashtextextended($1, 0))', [lockKey]);
        await waitFor(`a recompute of ${batchId} to be active`, async () => (await queue.getActive()).some((j) => j.data.batchId === batchId), 30_000);
        await killWorker(label);
        await lockClient.query('SELECT pg_advisory_unlock(hashtextextended($1, 0))', [lockKey]);
      };

      const faults = (async () => {
        // 1. Certainly mid-job: hold line 0's recompute lock, wait until its job is active (and waiting on
        //    the lock inside its transaction), kill, release.
        await at(10_000);
        await lockClient.connect();
        await killMidJob(loads[0]!.batchId, 'kill 1 (job of line 0 active, blocked on its batch lock)');

        // 2. Redis: graceful stop, 4 s away, start on the same port and data.
        await at(22_000);
        await redis!.stop();
        log('Redis stopped');
        await new Promise((r) => setTimeout(r, 4_000));
        await redis!.start();
        log('Redis started');

        // 3. Certainly mid-job again, on line 1's batch, right after Redis came back.
        await at(32_000);
        await killMidJob(loads[1]!.batchId, 'kill 2 (job of line 1 active, blocked on its batch lock)');

        // 4. Postgres: immediate stop (like a crash: no checkpoint, recovery at start), 3 s away, start.
        await at(42_000);
        await pgServer!.stop('immediate');
        log('Postgres stopped (immediate)');
        await new Promise((r) => setTimeout(r, 3_000));
        await pgServer!.start();
        log('Postgres started');

        // 5. One more kill once things run again.
        await at(52_000);
        await waitFor('any active recompute', async () => (await queue.getActive()).length > 0, 15_000, 10).catch(() => log('no active job seen for kill 3'));
        await killWorker('kill 3 (a job active)');
      })();

      await faults;
      await replay;
      await Promise.all(running);
      log(`controllers drained after ${((Date.now() - loadStart) / 1000).toFixed(1)} s`);

      // ---- settle: the queue idle and no batch stale, several checks in a row --------------------------
      let quiet = 0;
      let lastReport = 0;
      await waitFor(
        'the worker to settle (queue idle, no stale batch)',
        async () => {
          const counts = await queue.getJobCounts('active', 'waiting', 'delayed', 'prioritized', 'waiting-children');
          const busy = Object.values(counts).reduce((a, b) => a + b, 0);
          const stale = await prisma.batch.count({ where: { stale: true } });
          quiet = busy === 0 && stale === 0 ? quiet + 1 : 0;
          if (quiet === 0 && Date.now() - lastReport > 10_000) {
            lastReport = Date.now();
            log(`settling: jobs ${JSON.stringify(counts)}, stale batches ${stale}`);
          }
          return quiet >= 4;
        },
        150_000,
        500,
      );
      log(`settled after ${((Date.now() - loadStart) / 1000).toFixed(1)} s`);
      const machine = (label: string) =>
        `${label}: ${os.availableParallelism()} CPUs, ${Math.round(os.totalmem() / 2 ** 30)} GiB, load average ${os.loadavg().map((x) => x.toFixed(2)).join(' / ')}`;
      const summary = [
        machineAtStart,
        machine('machine at the end'),
        buildNote,
        ...faultLog,
        ...controllers.map((c, i) => `controller ${i}: ${JSON.stringify(c.stats)}`),
        `stalled events: ${stalledEvents}`,
        `samples sent: ${sent.size}; requests planned: ${planned.length}`,
      ].join('\n');
      console.log(`reliability run:\n${summary}`);

      // ---- 1. the controllers: nothing refused, nothing left unsent, and the faults were felt ----------
      for (const c of controllers) {
        expect(c.stats.refused, summary).toEqual([]);
        expect(c.pending, summary).toBe(0);
      }
      const retries = controllers.reduce((a, c) => a + c.stats.retries, 0);
      expect(retries, `the faults should have made controllers retry\n${summary}`).toBeGreaterThan(0);

      // ---- 2. every sample sent is stored exactly once, with its value -------------------------------
      const stored = await prisma.$queryRaw<Array<{ channelId: string; tMs: number; value: number }>>`
        SELECT "channelId", (extract(epoch FROM "t") * 1000)::float8 AS "tMs", "value" FROM "Sample"`;
      const storedMap = new Map<string, number>();
      for (const s of stored) {
        const key = `${s.channelId}@${Math.round(Number(s.tMs))}`;
        expect(storedMap.has(key), `sample ${key} stored twice`).toBe(false);
        storedMap.set(key, Number(s.value));
      }
      expect(storedMap.size).toBe(sent.size);
      const wrong = [...sent].filter(([k, v]) => storedMap.get(k) !== v).slice(0, 5);
      expect(wrong, 'samples missing or with another value').toEqual([]);

      // ---- 3. every load event once ---------------------------------------------------------------------
      const events = await prisma.loadEvent.findMany({ select: { batchId: true, kind: true, at: true } });
      expect(events.length).toBe(LINES * 4);
      for (const e of events) expect(sentEvents.get(e.batchId)?.get(e.kind)).toBe(e.at.getTime());

      // ---- 4. no deviation duplicated --------------------------------------------------------------------
      const dupKeys = await prisma.$queryRaw<Array<{ dedupKey: string; n: number }>>`
        SELECT "dedupKey", count(*)::int AS n FROM "Deviation" GROUP BY "dedupKey" HAVING count(*) > 1`;
      expect(dupKeys).toEqual([]);
      const dupConditions = await prisma.$queryRaw<Array<{ n: number }>>`
        SELECT count(*)::int AS n FROM "Deviation" GROUP BY "batchId", "rule", "channelId" HAVING count(*) > 1`;
      expect(dupConditions).toEqual([]);
      const opens = await prisma.$queryRaw<Array<{ deviationId: string; n: number }>>`
        SELECT d."id" AS "deviationId", count(a."id")::int AS n FROM "Deviation" d
        LEFT JOIN "DeviationAudit" a ON a."deviationId" = d."id" AND a."action" = 'OPEN'
        GROUP BY d."id" HAVING count(a."id") <> 1`;
      expect(opens, 'each deviation has exactly one OPEN audit entry').toEqual([]);

      // ---- 5. no recompute failed for good -----------------------------------------------------------
      const failed = await queue.getFailed();
      expect(failed.map((j) => `${j.data.batchId}: ${j.failedReason}`), summary).toEqual([]);
      // Two kills certainly cut a job off; BullMQ must have noticed both and run them again (the events
      // may trail the queue counts by a moment).
      await waitFor('two stalled-job events', async () => stalledEvents >= 2, 15_000).catch(() => undefined);
      expect(stalledEvents, summary).toBeGreaterThanOrEqual(2);
    } finally {
      await lockClient.end().catch(() => {});
      await queueEvents.close().catch(() => {});
      await queue.close().catch(() => {});
    }

    // ---- 6. the stored results equal a clean recompute ------------------------------------------------
    for (const w of workers) await w.kill('SIGTERM');
    const batchIds = [...sentEvents.keys()];
    const faulted = await resultsOf(prisma);
    // The planted excursion is found (the comparison below is not between two empty sets).
    expect(faulted.deviations.some((d) => d.rule === 'bath-band-excursion' && d.conditionPresent)).toBe(true);

    // 6a. Recomputing now, over the same database, changes nothing.
    const again = await startWorker(config, { metricsPort: null, aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') });
    try {
      for (const id of batchIds) {
        const out = await again.app.get(RecomputeService).recompute(id);
        expect(out.changes, `recompute of ${id} changed something`).toEqual([]);
      }
    } finally {
      await again.close();
    }
    expect(await resultsOf(prisma)).toEqual(faulted);

    // 6b. A copy of the database without any results, recomputed from scratch, finds the same.
    await api!.close();
    await prisma.$disconnect();
    const admin = new pg.Client({ connectionString: pgServer!.urlFor('postgres') });
    await admin.connect();
    // The template must have no sessions; pools just closed may take a moment to let go.
    for (let attempt = 0; ; attempt++) {
      try {
        await admin.query('CREATE DATABASE ausline_clean TEMPLATE ausline');
        break;
      } catch (error) {
        if (!(error instanceof Error && /being accessed by other users/.test(error.message)) || attempt >= 50) throw error;
        await new Promise((r) => setTimeout(r, 200));
      }
    }
    await admin.end();
    const cleanUrl = pgServer!.urlFor('ausline_clean');
    const clean = createPrismaClient(cleanUrl, { maxConnections: 4 });
    try {
      // This copy is thrown away: lift the audit trail's append-only trigger here (never on the real one)
      // so the copy starts with no results at all.
      await clean.$executeRawUnsafe('ALTER TABLE "DeviationAudit" DISABLE TRIGGER USER');
      await clean.$executeRawUnsafe('TRUNCATE "DeviationAudit", "Deviation", "Prediction" CASCADE');
      const fresh = await startWorker(
        { ...config, DATABASE_URL: cleanUrl, QUEUE_PREFIX: `${QUEUE_PREFIX}-clean` },
        { metricsPort: null, aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') },
      );
      try {
        for (const id of batchIds) await fresh.app.get(RecomputeService).recompute(id);
      } finally {
        await fresh.close();
      }
      const scratch = await resultsOf(clean);
      const present = (r: Results) => r.deviations.filter((d) => d.conditionPresent).map(({ status: _s, ...rest }) => rest);
      expect(present(scratch)).toEqual(present(faulted));
      expect(scratch.predictions).toEqual(faulted.predictions);
    } finally {
      await clean.$disconnect();
    }
  }, 600_000);
});

interface Results {
  deviations: Array<{ batchId: string | null; rule: string; channelId: string | null; severity: string; message: string; details: unknown; conditionPresent: boolean; status: string }>;
  /** Latest prediction per batch (model version, input digest, result), when the worker computes them. */
  predictions: Array<{ batchId: string; modelVersion: string; inputDigest: string; result: unknown }>;
}

async function resultsOf(db: PrismaClient): Promise<Results> {
  const deviations = await db.deviation.findMany({
    select: { batchId: true, rule: true, channelId: true, severity: true, message: true, details: true, conditionPresent: true, status: true },
    orderBy: [{ batchId: 'asc' }, { dedupKey: 'asc' }],
  });
  const latest = await db.$queryRaw<Array<{ batchId: string; modelVersion: string; inputDigest: string; result: unknown }>>`
    SELECT DISTINCT ON ("batchId") "batchId", "modelVersion", "inputDigest", "result"
    FROM "Prediction" ORDER BY "batchId", "version" DESC`;
  return { deviations, predictions: latest.map((p) => ({ ...p, result: withoutReadTimes(p.result) })) };
}

/** The prediction records when it read its inputs (`inputsReadAt`): a clock reading, not a result. */
function withoutReadTimes(value: unknown): unknown {
  if (Array.isArray(value)) return value.map(withoutReadTimes);
  if (value === null || typeof value !== 'object') return value;
  return Object.fromEntries(Object.entries(value).filter(([k]) => k !== 'inputsReadAt').map(([k, v]) => [k, withoutReadTimes(v)]));
}
