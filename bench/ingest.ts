/**
 * Ingest benchmark (issue 7, item 1): the real api process against a fresh database, many simulated
 * controllers posting sample batches on loopback, and in the same run the raw Postgres rate for the same
 * rows, so the figures are ratios against a baseline measured on the same (possibly busy) machine.
 *
 *   node --conditions=source --import tsx bench/ingest.ts        (npm run bench:ingest)
 *
 * Phases (every figure comes from this one run):
 *  1. plant rate: 50 controllers (5 lines × 10 furnaces/baths, 20 thermocouples each, 1 Hz) each posting
 *     its last second of readings once a second: 1,000 samples/s, open loop (requests leave on schedule
 *     whatever the replies do; latency counted from the scheduled time, so a slow reply cannot hide the
 *     queue behind it);
 *  2. saturation: C controllers posting back to back (closed loop), B samples per request, for a fixed
 *     time: sustained samples/s and latency;
 *  3. baselines on the same table with the same rows: COPY "Sample" FROM STDIN (1 and 8 streams, run
 *     before and after the api runs to bracket the machine's drift), and the api's own statements (binary
 *     COPY straight into "Sample" and the batches to queue, one transaction per request; and its path for
 *     a request with duplicates: COPY into its staging table, INSERT ... SELECT ... ON CONFLICT DO NOTHING)
 *     sent straight through pg by C connections (no HTTP, auth, JSON or idempotency), which shows where
 *     the api's time goes; and the statement the api sent before issue 7 (INSERT ... unnest ...).
 * Every request carries an Idempotency-Key (controllers retry with it) except in the row that says so;
 * every line has a batch in progress, so each post also finds its batch and queues a recompute (no worker
 * runs here: the queue only folds them by batch).
 *
 * Environment: BENCH_PLANT_S (default 30), BENCH_SATURATION_S (default 12), BENCH_NO_BUILD=1, and the
 * connection variables of bench/support/harness.ts. Traffic goes to 127.0.0.1 only; every loop is bounded
 * by time and by a prepared number of requests.
 */
import { randomBytes } from 'node:crypto';
import { readFileSync } from 'node:fs';
import type { Agent } from 'node:http';
import pg from 'pg';
import {
  benchPrisma,
  createBenchDatabase,
  createBenchPlant,
  deleteRedisPrefix,
  describeMachine,
  ensureBuilt,
  fmt,
  freePort,
  cpuSecondsOf,
  keepAliveAgent,
  machineInfo,
  percentile,
  postJson,
  printTable,
  serviceEnv,
  sleep,
  startService,
  type BenchController,
  type ChildService,
} from './support/harness.js';
import { binaryCopyRows, COPY_SAMPLE, copyFromStdin, COPY_STAGING, CREATE_STAGING, STORE_COPIED, STORE_FROM_STAGING, uuidBytes } from '../apps/api/src/ingest/samples-copy.js';

const LINES = 5;
const CONTROLLERS_PER_LINE = 10;
const CHANNELS = 20;
const PLANT_S = Number(process.env.BENCH_PLANT_S ?? 30);
const SATURATION_S = Number(process.env.BENCH_SATURATION_S ?? 12);
/** Requests prepared per saturation run are sized for this rate; running out is reported. */
const PREPARED_RATE = 160_000;
const GOAL_RATE = 50_000;
/** A controller posting every second (20 samples/request) and one buffering 5 s (100 samples/request). */
const PLANT_INTERVALS_S = [1, 5];
/** COPY with one stream, and with as many streams as the api's database pool has connections. */
const COPY_STREAMS = [1, 8];
const GOAL_COPY_RATIO = 0.5;
const GOAL_P99_PLANT_MS = 50;

interface SaturationConfig {
  label: string;
  concurrency: number;
  perRequest: number;
  idempotencyKey: boolean;
}
const SATURATION: SaturationConfig[] = [
  { label: 'A', concurrency: 8, perRequest: 1_000, idempotencyKey: true },
  { label: 'B', concurrency: 8, perRequest: 5_000, idempotencyKey: true },
  { label: 'C', concurrency: 8, perRequest: 1_000, idempotencyKey: false },
];

const runId = `${Math.floor(Date.now() / 1000)}_${randomBytes(3).toString('hex')}`;
/** Device time of tick 0: 40 h ago (inside the 48 h a batch without OUT_OF_BATH stays open). */
const T0_MS = Math.floor(Date.now() / 1000) * 1000 - 40 * 3_600_000;

// ---- what a controller sends: `ticks` seconds of all its channels, deterministic values ----------------

interface Chunk {
  controller: number;
  firstTick: number;
  ticks: number;
}

function valueAt(controller: number, channel: number, tick: number): number {
  return Math.round((370 + 2 * Math.sin(tick / 97 + channel) + 0.37 * Math.sin(tick * 1.7 + controller)) * 100) / 100;
}

function bodyOf(c: BenchController, chunk: Chunk): string {
  const parts: string[] = [];
  for (let k = 0; k < chunk.ticks; k++) {
    const tick = chunk.firstTick + k;
    const t = T0_MS + tick * 1000;
    for (let ch = 0; ch < c.channelCodes.length; ch++) {
      parts.push(`{"channel":"${c.channelCodes[ch]}","t":${t},"value":${valueAt(chunk.controller, ch, tick)}}`);
    }
  }
  return `{"samples":[${parts.join(',')}]}`;
}

function copyTextOf(c: BenchController, chunk: Chunk): Buffer {
  const lines: string[] = [];
  for (let k = 0; k < chunk.ticks; k++) {
    const tick = chunk.firstTick + k;
    const iso = new Date(T0_MS + tick * 1000).toISOString();
    for (let ch = 0; ch < c.channelIds.length; ch++) lines.push(`${c.channelIds[ch]}\t${iso}\t${valueAt(chunk.controller, ch, tick)}\n`);
  }
  return Buffer.from(lines.join(''));
}

function arraysOf(c: BenchController, chunk: Chunk): { channelIds: string[]; times: string[]; values: number[] } {
  const channelIds: string[] = [];
  const times: string[] = [];
  const values: number[] = [];
  for (let k = 0; k < chunk.ticks; k++) {
    const tick = chunk.firstTick + k;
    const iso = new Date(T0_MS + tick * 1000).toISOString();
    for (let ch = 0; ch < c.channelIds.length; ch++) {
      channelIds.push(c.channelIds[ch]!);
      times.push(iso);
      values.push(valueAt(chunk.controller, ch, tick));
    }
  }
  return { channelIds, times, values };
}

// ---- CPU of the whole machine, to show how busy it was during each phase ------------------------------

function machineCpu(): { busy: number; total: number } {
  const first = readFileSync('/proc/stat', 'utf8').split('\n')[0]!.trim().split(/\s+/).slice(1).map(Number);
  const total = first.reduce((a, b) => a + b, 0);
  const idle = (first[3] ?? 0) + (first[4] ?? 0);
  return { busy: total - idle, total };
}

interface PhaseResult {
  name: string;
  samples: number;
  requests: number;
  errors: number;
  seconds: number;
  latenciesMs: number[];
  apiCpuS: number;
  /** CPU seconds the Postgres backends serving the bench database used during the phase. */
  pgCpuS: number;
  machineBusyPct: number;
  note?: string;
}

/** A connection of its own (outside the pools, which the phases may use up) to list the database's backends. */
let monitor: pg.Client | null = null;
let benchDbName = '';

async function backendCpu(): Promise<Map<number, number>> {
  const out = new Map<number, number>();
  if (!monitor) return out;
  const { rows } = await monitor.query<{ pid: number }>('SELECT pid FROM pg_stat_activity WHERE datname = $1', [benchDbName]);
  for (const { pid } of rows) out.set(pid, cpuSecondsOf(pid));
  return out;
}

async function measure<T>(
  api: ChildService | null,
  run: () => Promise<T>,
): Promise<{ value: T; seconds: number; apiCpuS: number; pgCpuS: number; machineBusyPct: number }> {
  const pg0 = await backendCpu();
  const cpu0 = api?.cpuSeconds() ?? 0;
  const m0 = machineCpu();
  const t0 = performance.now();
  const value = await run();
  const seconds = (performance.now() - t0) / 1000;
  const m1 = machineCpu();
  const apiCpuS = (api?.cpuSeconds() ?? 0) - cpu0;
  const pg1 = await backendCpu();
  let pgCpuS = 0;
  for (const [pid, c] of pg1) if (Number.isFinite(c)) pgCpuS += c - (pg0.get(pid) ?? 0);
  return { value, seconds, apiCpuS, pgCpuS, machineBusyPct: (100 * (m1.busy - m0.busy)) / Math.max(1, m1.total - m0.total) };
}

// ---- phases ---------------------------------------------------------------------------------------

const cursor: number[] = []; // next unused tick per controller

function takeChunk(controller: number, ticks: number): Chunk {
  const firstTick = cursor[controller]!;
  cursor[controller] = firstTick + ticks;
  return { controller, firstTick, ticks };
}

async function plantRate(api: ChildService, agent: Agent, controllers: BenchController[], everyS: number): Promise<PhaseResult> {
  // Every controller posts the readings of its last `everyS` seconds once every `everyS` seconds, the
  // controllers spread evenly over the interval: 1,000 samples/s in all whatever the interval.
  const sends: Array<{ at: number; c: number; body: string }> = [];
  for (let k = 0; k < PLANT_S / everyS; k++) {
    controllers.forEach((ctl, c) => {
      const chunk = takeChunk(c, everyS);
      sends.push({ at: (k + c / controllers.length) * everyS * 1000, c, body: bodyOf(ctl, chunk) });
    });
  }
  sends.sort((a, b) => a.at - b.at);
  const latencies: number[] = [];
  let errors = 0;
  let stored = 0;
  const out = await measure(api, async () => {
    const start = performance.now();
    const inFlight: Promise<void>[] = [];
    let i = 0;
    while (i < sends.length) {
      const now = performance.now() - start;
      while (i < sends.length && sends[i]!.at <= now) {
        const s = sends[i++]!;
        const scheduled = start + s.at;
        const ctl = controllers[s.c]!;
        inFlight.push(
          postJson(agent, api.url, `/v1/equipment/${ctl.equipmentId}/samples`, s.body, {
            authorization: ctl.authorization,
            'idempotency-key': `plant-${runId}-${everyS}-${i}`,
          }).then(
            (r) => {
              latencies.push(performance.now() - scheduled);
              if (r.status === 200) stored += (JSON.parse(r.body) as { stored: number }).stored;
              else errors++;
            },
            () => {
              latencies.push(performance.now() - scheduled);
              errors++;
            },
          ),
        );
      }
      if (i < sends.length) await sleep(Math.max(0, Math.min(5, sends[i]!.at - (performance.now() - start))));
    }
    await Promise.all(inFlight);
  });
  return {
    name: `plant rate: ${controllers.length} controllers × ${CHANNELS * everyS} samples every ${everyS} s (open loop, ${PLANT_S} s)`,
    samples: stored,
    requests: sends.length,
    errors,
    seconds: out.seconds,
    latenciesMs: latencies.sort((a, b) => a - b),
    apiCpuS: out.apiCpuS,
    pgCpuS: out.pgCpuS,
    machineBusyPct: out.machineBusyPct,
  };
}

interface Prepared {
  config: SaturationConfig;
  /** Per loop, its requests in order. */
  perLoop: Array<Array<{ c: number; chunk: Chunk; body: string }>>;
  total: number;
}

function prepareSaturation(config: SaturationConfig, controllers: BenchController[]): Prepared {
  const ticksPerRequest = Math.ceil(config.perRequest / CHANNELS);
  const requests = Math.ceil((PREPARED_RATE * SATURATION_S) / config.perRequest);
  const perLoop: Prepared['perLoop'] = Array.from({ length: config.concurrency }, () => []);
  for (let r = 0; r < requests; r++) {
    const loop = r % config.concurrency;
    // Each loop rotates over its own controllers: no two in-flight requests of one controller.
    const own = controllers.map((_, i) => i).filter((i) => i % config.concurrency === loop);
    const c = own[Math.floor(r / config.concurrency) % own.length]!;
    const chunk = takeChunk(c, ticksPerRequest);
    perLoop[loop]!.push({ c, chunk, body: bodyOf(controllers[c]!, chunk) });
  }
  return { config, perLoop, total: requests };
}

async function saturation(api: ChildService, agent: Agent, controllers: BenchController[], prepared: Prepared): Promise<PhaseResult> {
  const { config } = prepared;
  const latencies: number[] = [];
  let errors = 0;
  let stored = 0;
  let sent = 0;
  let ranOut = false;
  const out = await measure(api, async () => {
    const stopAt = performance.now() + SATURATION_S * 1000;
    await Promise.all(
      prepared.perLoop.map(async (queue, loop) => {
        for (let k = 0; ; k++) {
          if (performance.now() >= stopAt) return;
          const next = queue[k];
          if (!next) {
            ranOut = true;
            return;
          }
          const ctl = controllers[next.c]!;
          const headers: Record<string, string> = { authorization: ctl.authorization };
          if (config.idempotencyKey) headers['idempotency-key'] = `sat-${runId}-${config.label}-${loop}-${k}`;
          const t0 = performance.now();
          sent++;
          try {
            const r = await postJson(agent, api.url, `/v1/equipment/${ctl.equipmentId}/samples`, next.body, headers);
            if (r.status === 200) stored += (JSON.parse(r.body) as { stored: number }).stored;
            else errors++;
          } catch {
            errors++;
          }
          latencies.push(performance.now() - t0);
        }
      }),
    );
  });
  return {
    name: `saturation ${config.label}: ${config.concurrency} in flight × ${fmt(config.perRequest, 0)} samples/request${config.idempotencyKey ? '' : ', no Idempotency-Key'}`,
    samples: stored,
    requests: sent,
    errors,
    seconds: out.seconds,
    latenciesMs: latencies.sort((a, b) => a - b),
    apiCpuS: out.apiCpuS,
    pgCpuS: out.pgCpuS,
    machineBusyPct: out.machineBusyPct,
    note: ranOut ? 'ran out of prepared requests: raise PREPARED_RATE' : undefined,
  };
}

async function copyBaseline(pool: pg.Pool, controllers: BenchController[], prepared: Prepared, streams: number, label: string): Promise<PhaseResult> {
  const chunks = prepared.perLoop.flat().map((r) => copyTextOf(controllers[r.c]!, r.chunk));
  const parts: Buffer[][] = Array.from({ length: streams }, () => []);
  chunks.forEach((chunk, i) => parts[i % streams]!.push(chunk));
  const clients = await Promise.all(parts.map(() => pool.connect()));
  try {
    const out = await measure(null, async () => {
      const copied = await Promise.all(parts.map((p, i) => copyFromStdin(clients[i]!, 'COPY "Sample" ("channelId", "t", "value") FROM STDIN', p)));
      return copied.reduce((a, b) => a + b, 0);
    });
    return {
      name: `raw COPY "Sample" FROM STDIN, ${streams} ${streams === 1 ? 'stream' : 'streams'} (${label})`,
      samples: out.value,
      requests: streams,
      errors: 0,
      seconds: out.seconds,
      latenciesMs: [],
      apiCpuS: NaN,
      pgCpuS: out.pgCpuS,
      machineBusyPct: out.machineBusyPct,
    };
  } finally {
    for (const c of clients) c.release();
  }
}

/**
 * The statement the api sent before issue 7's rework (INSERT ... SELECT FROM unnest(text arrays) ... ON
 * CONFLICT, with a second primary-key probe per row for the conflicts count), kept as a reference point.
 */
const PREVIOUS_API_INSERT_SQL = `
  WITH input AS (
    SELECT * FROM unnest($1::uuid[], $2::timestamptz[], $3::float8[]) AS s("channelId", "t", "value")
  ), inserted AS (
    INSERT INTO "Sample" ("channelId", "t", "value")
    SELECT "channelId", "t", "value" FROM input
    ON CONFLICT ("channelId", "t") DO NOTHING
    RETURNING "t"
  )
  SELECT
    (SELECT count(*) FROM inserted)::int AS "stored",
    (SELECT min("t") FROM inserted) AS "minT",
    (SELECT max("t") FROM inserted) AS "maxT",
    (SELECT count(*) FROM input i JOIN "Sample" s ON s."channelId" = i."channelId" AND s."t" = i."t"
       WHERE s."value" IS DISTINCT FROM i."value")::int AS "conflicts"`;

/** Each controller's line id (the store statement finds the line's batches to queue). */
const lineOf = new Map<string, string>();

/**
 * One request's rows as the api stores them (without an Idempotency-Key), in one transaction: 'direct' is
 * the common case (COPY straight into "Sample", then the batches to queue), 'staged' the path of a request
 * with duplicates (COPY into the staging table, then INSERT ... SELECT ... ON CONFLICT with the counts).
 */
async function apiInsert(client: pg.PoolClient, c: BenchController, chunk: Chunk, how: 'direct' | 'staged'): Promise<number> {
  const a = arraysOf(c, chunk);
  const times = a.times.map((t) => Date.parse(t));
  const channelBytes = new Map(c.channelIds.map((id) => [id, uuidBytes(id)]));
  const rows = [binaryCopyRows(a.channelIds.length, (i) => channelBytes.get(a.channelIds[i]!)!, (i) => times[i]!, (i) => a.values[i]!)];
  const values = [lineOf.get(c.equipmentId), times.length, new Date(Math.min(...times)), new Date(Math.max(...times)), null];
  await client.query('BEGIN');
  try {
    let stored: number;
    if (how === 'direct') {
      stored = await copyFromStdin(client, COPY_SAMPLE, rows);
      await client.query({ ...STORE_COPIED, values });
    } else {
      await copyFromStdin(client, COPY_STAGING, rows);
      stored = (await client.query<{ stored: number }>({ ...STORE_FROM_STAGING, values })).rows[0]!.stored;
    }
    await client.query('COMMIT');
    return stored;
  } catch (error) {
    await client.query('ROLLBACK');
    throw error;
  }
}

async function directInsert(pool: pg.Pool, controllers: BenchController[], prepared: Prepared, how: 'direct' | 'staged' | 'previous'): Promise<PhaseResult> {
  const latencies: number[] = [];
  let stored = 0;
  const out = await measure(null, () =>
    Promise.all(
      prepared.perLoop.map(async (queue) => {
        const client = await pool.connect();
        try {
          await client.query(CREATE_STAGING);
          for (const r of queue) {
            const t0 = performance.now();
            // (Awaited first, then added: `stored += await ...` would read `stored` before the await and lose the other loops' counts.)
            const n =
              how !== 'previous'
                ? await apiInsert(client, controllers[r.c]!, r.chunk, how)
                : await (async () => {
                    const a = arraysOf(controllers[r.c]!, r.chunk);
                    return (await client.query<{ stored: number }>(PREVIOUS_API_INSERT_SQL, [a.channelIds, a.times, a.values])).rows[0]!.stored;
                  })();
            stored += n;
            latencies.push(performance.now() - t0);
          }
        } finally {
          client.release();
        }
      }),
    ),
  );
  return {
    name: {
      direct: `the api's statements via pg (binary COPY into "Sample" + batches, 1 transaction), ${prepared.config.concurrency} connections × ${fmt(prepared.config.perRequest, 0)} rows (no HTTP)`,
      staged: `the api's duplicate path via pg (binary COPY to staging + INSERT…SELECT…ON CONFLICT), ${prepared.config.concurrency} × ${fmt(prepared.config.perRequest, 0)} rows`,
      previous: `the previous api statement (INSERT…unnest…ON CONFLICT + conflicts count) via pg, ${prepared.config.concurrency} × ${fmt(prepared.config.perRequest, 0)} rows`,
    }[how],
    samples: stored,
    requests: latencies.length,
    errors: 0,
    seconds: out.seconds,
    latenciesMs: latencies.sort((a, b) => a - b),
    apiCpuS: NaN,
    pgCpuS: out.pgCpuS,
    machineBusyPct: out.machineBusyPct,
  };
}

async function main(): Promise<void> {
  const before = await machineInfo();
  console.log(`ausline ingest bench, run ${runId}`);
  console.log(`machine at start: ${describeMachine(before)}`);
  ensureBuilt();

  const db = await createBenchDatabase();
  const prefix = `ausline-bench:${runId}`;
  const prisma = benchPrisma(db.url);
  const pool = new pg.Pool({ connectionString: db.url, max: 8 });
  pool.on('error', () => {}); // idle clients ended by the DROP DATABASE at the end
  benchDbName = db.name;
  monitor = new pg.Client({ connectionString: db.url });
  monitor.on('error', () => {});
  await monitor.connect();
  let api: ChildService | null = null;
  const agent = keepAliveAgent(64);
  try {
    const plant = await createBenchPlant(prisma, { lines: LINES, controllersPerLine: CONTROLLERS_PER_LINE, channelsPerController: CHANNELS, chargedAtMs: T0_MS - 60_000 });
    const controllers = plant.controllers;
    await prisma.$disconnect();
    controllers.forEach((_, i) => (cursor[i] = 0));
    api = await startService('api', serviceEnv({ databaseUrl: db.url, queuePrefix: prefix, port: await freePort() }));

    const truncate = () => pool.query('TRUNCATE "Sample"');
    const count = async () => Number((await pool.query<{ n: string }>('SELECT count(*) AS n FROM "Sample"')).rows[0]!.n);

    // Warm-up (not counted): JIT, connection pools, plan caches.
    const warm = prepareSaturation({ label: 'warm-up', concurrency: 8, perRequest: 1_000, idempotencyKey: true }, controllers);
    warm.perLoop = warm.perLoop.map((q) => q.slice(0, 8));
    await saturation(api, agent, controllers, warm);
    await truncate();

    const results: PhaseResult[] = [];
    const checks: string[] = [];
    const plantRuns: PhaseResult[] = [];
    for (const everyS of PLANT_INTERVALS_S) {
      console.log(`phase 1: plant rate, posts every ${everyS} s, for ${PLANT_S} s ...`);
      const r = await plantRate(api, agent, controllers, everyS);
      const n = await count();
      checks.push(`plant rate every ${everyS} s: ${fmt(n, 0)} rows in "Sample" for ${fmt(r.samples, 0)} acknowledged as stored`);
      if (n !== r.samples) throw new Error(`row count ${n} differs from the ${r.samples} samples the api acknowledged`);
      plantRuns.push(r);
      results.push(r);
      await truncate();
    }

    console.log('preparing saturation requests ...');
    const prepared = SATURATION.map((config) => prepareSaturation(config, controllers));
    const copyRows = prepared[0]!;

    console.log('phase 2: raw COPY (before) ...');
    const copyBefore: PhaseResult[] = [];
    for (const streams of COPY_STREAMS) {
      copyBefore.push(await copyBaseline(pool, controllers, copyRows, streams, 'before the api runs'));
      await truncate();
    }

    const saturationResults: PhaseResult[] = [];
    for (const p of prepared) {
      console.log(`phase 3${p.config.label}: saturation ${p.config.concurrency} × ${p.config.perRequest} for ${SATURATION_S} s ...`);
      const r = await saturation(api, agent, controllers, p);
      const n = await count();
      checks.push(`saturation ${p.config.label}: ${fmt(n, 0)} rows in "Sample" for ${fmt(r.samples, 0)} acknowledged as stored`);
      if (n !== r.samples) throw new Error(`row count ${n} differs from the ${r.samples} samples the api acknowledged`);
      saturationResults.push(r);
      results.push(r);
      await truncate();
    }

    console.log('phase 4: raw COPY (after) and direct INSERT ...');
    const copyAfter: PhaseResult[] = [];
    for (const streams of COPY_STREAMS) {
      copyAfter.push(await copyBaseline(pool, controllers, copyRows, streams, 'after the api runs'));
      await truncate();
    }
    for (const r of (await pool.query<{ id: string; lineId: string }>('SELECT "id", "lineId" FROM "Equipment"')).rows) lineOf.set(r.id, r.lineId);
    const direct = await directInsert(pool, controllers, copyRows, 'direct');
    await truncate();
    const staged = await directInsert(pool, controllers, copyRows, 'staged');
    await truncate();
    const previous = await directInsert(pool, controllers, copyRows, 'previous');
    await truncate();
    results.push(...copyBefore, ...copyAfter, direct, staged, previous);

    const after = await machineInfo();
    const rate = (r: PhaseResult) => r.samples / r.seconds;
    // The baseline is the better of the stream counts, each the mean of its runs before and after the api.
    const copyMeans = COPY_STREAMS.map((streams, i) => ({ streams, rate: (rate(copyBefore[i]!) + rate(copyAfter[i]!)) / 2 }));
    const copyBest = copyMeans.reduce((a, b) => (b.rate > a.rate ? b : a));
    const copyRate = copyBest.rate;
    console.log('');
    console.log(`ausline ingest bench — ${new Date().toISOString()}`);
    console.log(`machine: ${describeMachine(before)}`);
    console.log(`load average at the end: ${after.loadAverage.join(' / ')}`);
    console.log(`plant: ${LINES} lines × ${CONTROLLERS_PER_LINE} controllers × ${CHANNELS} channels, one EQUIPMENT key per controller; api = node apps/api/dist/main.js (one process)`);
    console.log('');
    // CPU seconds per 100,000 samples: what the machine pays, whatever share of it the run got.
    const per100k = (cpuS: number, r: PhaseResult) => (cpuS / r.samples) * 100_000;
    const totalCpu = (r: PhaseResult) => (Number.isFinite(r.apiCpuS) ? r.apiCpuS : 0) + r.pgCpuS;
    const copyCpuRuns = [...copyBefore, ...copyAfter].filter((r) => r.requests === copyBest.streams);
    const copyCpuPer100k = copyCpuRuns.reduce((a, r) => a + per100k(totalCpu(r), r), 0) / copyCpuRuns.length;
    printTable(
      ['phase', 'samples', 'requests', 'errors', 'samples/s', 'p50 ms', 'p99 ms', 'api CPU s/100k', 'pg CPU s/100k', 'machine busy', '× COPY rate', '× COPY CPU cost'],
      results.map((r) => [
        r.name,
        fmt(r.samples, 0),
        fmt(r.requests, 0),
        String(r.errors),
        fmt(rate(r), 0),
        r.latenciesMs.length ? fmt(percentile(r.latenciesMs, 50), 1) : '–',
        r.latenciesMs.length ? fmt(percentile(r.latenciesMs, 99), 1) : '–',
        Number.isFinite(r.apiCpuS) ? fmt(per100k(r.apiCpuS, r), 2) : '–',
        fmt(per100k(r.pgCpuS, r), 2),
        `${fmt(r.machineBusyPct, 0)} %`,
        fmt(rate(r) / copyRate, 2),
        fmt(per100k(totalCpu(r), r) / copyCpuPer100k, 2),
      ]),
    );
    for (const r of results) if (r.note) console.log(`note (${r.name}): ${r.note}`);
    console.log('');
    console.log(
      `baseline: raw COPY ${fmt(copyRate, 0)} samples/s with ${copyBest.streams} ${copyBest.streams === 1 ? 'stream' : 'streams'} (mean of the runs before and after the api; ` +
        copyMeans.map((m) => `${m.streams} → ${fmt(m.rate, 0)}`).join(', ') +
        `), ${fmt(copyRows.total * copyRows.config.perRequest, 0)} rows: saturation A's prepared requests`,
    );
    for (const c of checks) console.log(`check: ${c}`);
    const best = saturationResults.filter((r) => SATURATION.find((s) => r.name.includes(` ${s.label}:`))?.idempotencyKey).sort((a, b) => rate(b) - rate(a))[0]!;
    const verdict = (ok: boolean) => (ok ? 'met' : 'NOT met');
    const bestCpu = per100k(totalCpu(best), best) / 100_000; // CPU seconds per sample, api + Postgres
    const bestApiCpu = per100k(best.apiCpuS, best) / 100_000;
    const cores = before.cpus;
    // If the run had the machine to itself: all cores busy, the api (one process) on at most one of them.
    const projected = Math.min(cores / bestCpu, 1 / bestApiCpu);
    console.log('');
    console.log(`goal ≥ ${fmt(GOAL_RATE, 0)} samples/s sustained (best run with Idempotency-Key: ${best.name.split(':')[0]}): measured ${fmt(rate(best), 0)} — ${verdict(rate(best) >= GOAL_RATE)}`);
    console.log(
      `  CPU cost ${fmt(bestCpu * 1e6, 1)} µs per sample (api ${fmt(bestApiCpu * 1e6, 1)}, Postgres ${fmt(bestCpu * 1e6 - bestApiCpu * 1e6, 1)}); on this machine with nothing else running that projects to ~${fmt(projected, 0)} samples/s (min of ${cores} cores / total cost and 1 core / api cost: a projection, not a measurement)`,
    );
    console.log(
      `goal ≥ ${GOAL_COPY_RATIO} × raw COPY: rate ${fmt(rate(best) / copyRate, 2)} × — ${verdict(rate(best) / copyRate >= GOAL_COPY_RATIO)}; CPU cost ${fmt(per100k(totalCpu(best), best) / copyCpuPer100k, 2)} × COPY's (≤ ${fmt(1 / GOAL_COPY_RATIO, 0)} would meet it on an idle machine) — ${verdict(per100k(totalCpu(best), best) / copyCpuPer100k <= 1 / GOAL_COPY_RATIO)}`,
    );
    for (const [i, run] of plantRuns.entries()) {
      const p99 = percentile(run.latenciesMs, 99);
      console.log(
        `goal p99 < ${GOAL_P99_PLANT_MS} ms at the plant's rate, posts every ${PLANT_INTERVALS_S[i]} s: p99 ${fmt(p99, 1)} ms (p50 ${fmt(percentile(run.latenciesMs, 50), 1)} ms, max ${fmt(run.latenciesMs.at(-1)!, 1)} ms) — ${verdict(p99 < GOAL_P99_PLANT_MS)}`,
      );
    }
    console.log(
      `JSON ${JSON.stringify({
        bench: 'ingest',
        at: new Date().toISOString(),
        machine: before,
        loadAverageAtEnd: after.loadAverage,
        copyRate: Math.round(copyRate),
        phases: results.map((r) => ({
          name: r.name,
          samples: r.samples,
          requests: r.requests,
          errors: r.errors,
          samplesPerS: Math.round(rate(r)),
          p50Ms: r.latenciesMs.length ? +percentile(r.latenciesMs, 50).toFixed(1) : null,
          p99Ms: r.latenciesMs.length ? +percentile(r.latenciesMs, 99).toFixed(1) : null,
          apiCpuSPer100k: Number.isFinite(r.apiCpuS) ? +((r.apiCpuS / r.samples) * 100_000).toFixed(2) : null,
          pgCpuSPer100k: +((r.pgCpuS / r.samples) * 100_000).toFixed(2),
          machineBusyPct: Math.round(r.machineBusyPct),
          ratioToCopy: +(rate(r) / copyRate).toFixed(3),
        })),
      })}`,
    );
  } finally {
    agent.destroy();
    await monitor?.end().catch(() => {});
    await api?.stop();
    await prisma.$disconnect().catch(() => {});
    await pool.end().catch(() => {});
    await db.drop().catch((e: unknown) => console.error(`could not drop ${db.name}: ${String(e)}`));
    await deleteRedisPrefix(prefix).catch(() => {});
  }
}

await main();
