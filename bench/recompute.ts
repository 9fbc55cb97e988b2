/**
 * Recompute benchmark (issue 7, item 2), two parts in one run:
 *
 *   node --conditions=source --import tsx bench/recompute.ts      (npm run bench:recompute)
 *
 * A. The model's cost (libs/metallurgy, the engine the worker's prediction step runs): a 4-hour, 1 Hz bath
 *    log with 1,000 uncertainty samples (+ the nominal member), from scratch; then the live path — advance
 *    the saved state by 10 new readings, finalize, and the JSON round trip of the state the worker stores —
 *    timed early, in the middle and late in the batch (flat is the goal), each against recomputing from
 *    scratch over the history so far, in the same run. Wall and process-CPU medians (CPU time is the
 *    steadier figure on a shared machine).
 *
 * B. Post → stream latency with the worker running: the built api and worker as child processes on a
 *    fresh database; a probe controller on its own line (load in the bath, 20 thermocouples) posts its
 *    latest readings and waits for its batch's events on GET /v1/stream: the first `batch.updated`
 *    (process-window rules committed) and the second (the prediction committed). First with the plant
 *    idle (the baseline), then while one line (5 controllers × 20 channels: 100 samples/s) posts, then
 *    while the whole plant does: 10 such lines, 1,000 samples/s, each controller posting its last second
 *    once a second at its own random phase, every load in the bath with 10 min of history. The ratio
 *    loaded/idle is the figure that carries over to other machines. The worker's job count and mean job
 *    time come from its /metrics. (The worker's reconciler interval is set to an hour so its periodic pass
 *    does not trigger probe recomputes; every recompute here is caused by posted samples.)
 *
 * Environment: BENCH_PROBES (default 20 per phase), BENCH_PHASE_S (default 90: the most a loaded phase
 * probes), BENCH_MODEL_RUNS (default 5), BENCH_SKIP_MODEL=1,
 * BENCH_SKIP_SERVICE=1, BENCH_NO_BUILD=1, and the connection variables of bench/support/harness.ts.
 * Traffic goes to 127.0.0.1 only; every loop is bounded.
 */
import { randomBytes } from 'node:crypto';
import pg from 'pg';
import { Queue } from 'bullmq';
import { RECOMPUTE_QUEUE } from '@ausline/contracts';
import { advanceBath, clearModelCache, createBathState, finalizeBatch, type BathState, type BatchSetup } from '@ausline/metallurgy';
import {
  BENCH_REDIS_URL,
  benchPrisma,
  createBenchDatabase,
  createBenchPlant,
  deleteRedisPrefix,
  describeMachine,
  ensureBuilt,
  fmt,
  freePort,
  keepAliveAgent,
  machineInfo,
  openStream,
  percentile,
  postJson,
  printTable,
  serviceEnv,
  signedInUser,
  sleep,
  startService,
  type BenchController,
  type ChildService,
  type StreamEvent,
} from './support/harness.js';
import { copyFromStdin } from './support/pg-copy.js';

const PROBES = Number(process.env.BENCH_PROBES ?? 20);
const MODEL_RUNS = Number(process.env.BENCH_MODEL_RUNS ?? 5);
const runId = `${Math.floor(Date.now() / 1000)}_${randomBytes(3).toString('hex')}`;

interface Timing {
  wallMs: number;
  cpuMs: number;
}
function timed<T>(fn: () => T): { value: T } & Timing {
  const c0 = process.cpuUsage();
  const t0 = performance.now();
  const value = fn();
  const wallMs = performance.now() - t0;
  const c = process.cpuUsage(c0);
  return { value, wallMs, cpuMs: (c.user + c.system) / 1000 };
}
const median = (xs: number[]) => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length === 0 ? NaN : s.length % 2 ? s[(s.length - 1) / 2]! : 0.5 * (s[s.length / 2 - 1]! + s[s.length / 2]!);
};

// =====================================================================================================
// A. The model's cost
// =====================================================================================================

interface ModelFigures {
  scratch: Timing;
  windows: Array<{ name: string; increment: Timing; jsonMs: number; scratchSoFar: Timing }>;
  stateKiB: number;
}

function modelCost(): ModelFigures {
  const HOURS = 4;
  const setup: BatchSetup = {
    material: 'steel',
    chemistryWtPct: { C: 0.6, Si: 1.6, Mn: 0.8, Cr: 0.5, Mo: 0.2 },
    grainSizeAstm: 8,
    section: { shape: 'cylinder', diameterMm: 8 },
    austenitize: { tempC: 880, minutes: 20 },
    transferS: 5,
    agitation: 'strong',
    ambientC: 20,
    uncertainty: { samples: 1000, seed: 1 },
  };
  // Invented bath log: 300 °C set point, a slow controller swing and sensor noise (deterministic).
  const log: Array<[number, number]> = [];
  let noise = 12345;
  for (let t = 0; t <= HOURS * 3600; t++) {
    noise = (noise * 1103515245 + 12345) % 2147483648;
    log.push([t, 300 + 1.5 * Math.sin(t / 420) + 0.3 * (noise / 2147483648 - 0.5)]);
  }
  finalizeBatch(advanceBath(createBathState(setup), log.slice(0, 3600))); // JIT warm-up, not counted

  const scratch: Timing[] = [];
  for (let r = 0; r < MODEL_RUNS; r++) {
    clearModelCache(); // what a worker pays for a batch it has never seen
    scratch.push(timed(() => finalizeBatch(advanceBath(createBathState(setup), log))));
  }

  const STEP = 10;
  const windows = [
    { name: 'early (first 10 min)', from: 0, to: 600 },
    { name: 'middle (2 h ± 5 min)', from: 7200 - 300, to: 7200 + 300 },
    { name: 'late (last 10 min)', from: HOURS * 3600 - 600, to: HOURS * 3600 + 1 },
  ].map((w) => ({ ...w, inc: [] as Timing[], json: [] as number[] }));
  let state: BathState = createBathState(setup);
  let stateBytes = 0;
  for (let i = 0; i < log.length; i += STEP) {
    const slice = log.slice(i, i + STEP);
    const w = windows.find((x) => log[i]![0] >= x.from && log[i]![0] < x.to);
    if (!w) {
      state = advanceBath(state, slice);
      continue;
    }
    const step = timed(() => {
      const next = advanceBath(state, slice);
      finalizeBatch(next);
      return next;
    });
    const t0 = performance.now();
    const text = JSON.stringify(step.value);
    state = JSON.parse(text) as BathState;
    w.json.push(performance.now() - t0);
    stateBytes = text.length;
    w.inc.push(step);
  }
  return {
    scratch: { wallMs: median(scratch.map((s) => s.wallMs)), cpuMs: median(scratch.map((s) => s.cpuMs)) },
    windows: windows.map((w) => {
      const end = Math.min(log.length, Math.round((w.from + w.to) / 2));
      const so: Timing[] = [];
      for (let r = 0; r < 3; r++) so.push(timed(() => finalizeBatch(advanceBath(createBathState(setup), log.slice(0, end + 1)))));
      return {
        name: w.name,
        increment: { wallMs: median(w.inc.map((x) => x.wallMs)), cpuMs: median(w.inc.map((x) => x.cpuMs)) },
        jsonMs: median(w.json),
        scratchSoFar: { wallMs: median(so.map((x) => x.wallMs)), cpuMs: median(so.map((x) => x.cpuMs)) },
      };
    }),
    stateKiB: stateBytes / 1024,
  };
}

// =====================================================================================================
// B. Post -> stream latency with the worker running
// =====================================================================================================

const BACKGROUND_LINES = 10;
const BACKGROUND_CONTROLLERS = 5;
const CHANNELS = 20;
/** Minutes each load has already spent in the bath when the run starts (history preloaded with COPY). */
const HISTORY_MIN = 10;
/** Longest a loaded phase probes (bounded even when every probe waits its full 30 s). */
const PHASE_BUDGET_S = Number(process.env.BENCH_PHASE_S ?? 90);

function reading(controller: number, channel: number, tS: number, bath: boolean): number {
  const base = bath ? 370 : 900;
  return Math.round((base + 1.2 * Math.sin(tS / 300 + channel) + 0.25 * Math.sin(tS * 1.3 + controller)) * 100) / 100;
}

function samplesBody(c: BenchController, ci: number, fromS: number, toS: number, bath: boolean): string {
  const parts: string[] = [];
  for (let s = fromS; s <= toS; s++) {
    for (let ch = 0; ch < c.channelCodes.length; ch++) parts.push(`{"channel":"${c.channelCodes[ch]}","t":${s * 1000},"value":${reading(ci, ch, s, bath)}}`);
  }
  return `{"samples":[${parts.join(',')}]}`;
}

async function preloadHistory(pool: pg.Pool, controllers: BenchController[], isBath: (c: BenchController) => boolean, fromS: number, toS: number): Promise<number> {
  const chunks: Buffer[] = [];
  controllers.forEach((c, ci) => {
    const lines: string[] = [];
    for (let s = fromS; s <= toS; s++) {
      const iso = new Date(s * 1000).toISOString();
      for (let ch = 0; ch < c.channelIds.length; ch++) lines.push(`${c.channelIds[ch]}\t${iso}\t${reading(ci, ch, s, isBath(c))}\n`);
    }
    chunks.push(Buffer.from(lines.join('')));
  });
  const client = await pool.connect();
  try {
    return await copyFromStdin(client, 'COPY "Sample" ("channelId", "t", "value") FROM STDIN', chunks);
  } finally {
    client.release();
  }
}

interface ProbeFigures {
  rulesMs: number[];
  predictionMs: number[];
  missedPrediction: number;
  timeouts: number;
}

async function probe(
  api: ChildService,
  agent: ReturnType<typeof keepAliveAgent>,
  probeCtl: BenchController,
  batchId: string,
  events: StreamEvent[],
  count: number,
  lastSentS: { s: number },
  budgetMs = Infinity,
): Promise<ProbeFigures> {
  const figures: ProbeFigures = { rulesMs: [], predictionMs: [], missedPrediction: 0, timeouts: 0 };
  const stopAt = performance.now() + budgetMs;
  for (let k = 0; k < count && performance.now() < stopAt; k++) {
    await sleep(700 + Math.random() * 600);
    const nowS = Math.floor(Date.now() / 1000);
    if (nowS <= lastSentS.s) continue;
    const body = samplesBody(probeCtl, 999, lastSentS.s + 1, nowS, true);
    lastSentS.s = nowS;
    const seen = events.length;
    const t0 = performance.now();
    const r = await postJson(agent, api.url, `/v1/equipment/${probeCtl.equipmentId}/samples`, body, { authorization: probeCtl.authorization });
    if (r.status !== 200) throw new Error(`probe post answered ${r.status}: ${r.body}`);
    const mine = () => events.slice(seen).filter((e) => e.data.type === 'batch.updated' && e.data.batchId === batchId);
    const deadline = performance.now() + 30_000;
    while (mine().length < 1 && performance.now() < deadline) await sleep(2);
    const got = mine();
    if (got.length < 1) {
      figures.timeouts++;
      continue;
    }
    figures.rulesMs.push(got[0]!.receivedAt - t0);
    // The prediction's commit publishes a second batch.updated (when the prediction changed).
    const predictionDeadline = performance.now() + 15_000;
    while (mine().length < 2 && performance.now() < predictionDeadline) await sleep(2);
    const again = mine();
    if (again.length >= 2) figures.predictionMs.push(again[1]!.receivedAt - t0);
    else figures.missedPrediction++;
    // Let any recompute still running for this batch finish before the next probe.
    await sleep(200);
  }
  return figures;
}

interface WorkerMetrics {
  jobs: number;
  seconds: number;
}

async function workerMetrics(port: number): Promise<WorkerMetrics> {
  const text = await fetch(`http://127.0.0.1:${port}/metrics`).then((r) => r.text(), () => '');
  let jobs = 0;
  let seconds = 0;
  for (const line of text.split('\n')) {
    if (line.startsWith('ausline_job_duration_seconds_count')) jobs += Number(line.split(' ').pop());
    if (line.startsWith('ausline_job_duration_seconds_sum')) seconds += Number(line.split(' ').pop());
  }
  return { jobs, seconds };
}

/** The recompute queue during a phase: the most jobs seen waiting (or delayed) and active at once, sampled every 250 ms. */
interface QueueDepth {
  maxWaiting: number;
  maxActive: number;
  samples: number;
}

function sampleQueue(queue: Queue) {
  let stop = false;
  const depth: QueueDepth = { maxWaiting: 0, maxActive: 0, samples: 0 };
  const run = (async () => {
    while (!stop) {
      const c = await queue.getJobCounts('waiting', 'delayed', 'active').catch(() => null);
      if (c) {
        depth.maxWaiting = Math.max(depth.maxWaiting, (c.waiting ?? 0) + (c.delayed ?? 0));
        depth.maxActive = Math.max(depth.maxActive, c.active ?? 0);
        depth.samples++;
      }
      await sleep(250);
    }
  })();
  return {
    async stop(): Promise<QueueDepth> {
      stop = true;
      await run;
      return depth;
    },
  };
}

/** Recompute jobs that finished in [fromMs, toMs) (the queue keeps the last 1,000), and how many left their prediction to a successor. */
async function finishedJobs(queue: Queue, fromMs: number, toMs: number): Promise<{ jobs: number; predictionDeferred: number; batches: number }> {
  const done = (await queue.getJobs(['completed'], 0, 999)).filter((j) => j.finishedOn !== undefined && j.finishedOn >= fromMs && j.finishedOn < toMs);
  return {
    jobs: done.length,
    predictionDeferred: done.filter((j) => (j.returnvalue as { predictionDeferred?: boolean } | null)?.predictionDeferred === true).length,
    batches: new Set(done.map((j) => (j.data as { batchId: string }).batchId)).size,
  };
}

interface LoadedPhase {
  name: string;
  probes: ProbeFigures;
  seconds: number;
  queue: QueueDepth;
  finished: { jobs: number; predictionDeferred: number; batches: number };
  backgroundSamplesPerS: number;
  backgroundErrors: number;
  backgroundErrorKinds: Record<string, number>;
  postP50Ms: number;
  postP99Ms: number;
  worker: WorkerMetrics;
}

interface ServiceFigures {
  idle: ProbeFigures;
  workerIdle: WorkerMetrics;
  queueIdle: QueueDepth;
  phases: LoadedPhase[];
  predictionRows: number;
  workerWarnings: string;
}

/** Background controllers posting the second just past, once a second each, at random phases. */
function startBackground(api: ChildService, agent: ReturnType<typeof keepAliveAgent>, controllers: BenchController[]) {
  let stop = false;
  let samples = 0;
  let errors = 0;
  const errorKinds: Record<string, number> = {};
  const latencies: number[] = [];
  const startedAt = performance.now();
  const last = controllers.map(() => Math.floor(Date.now() / 1000) - 1);
  const run = Promise.all(
    controllers.map(async (c, ci) => {
      await sleep(Math.random() * 1000);
      while (!stop) {
        const tickStart = performance.now();
        const s = Math.floor(Date.now() / 1000);
        if (s > last[ci]!) {
          const body = samplesBody(c, ci, last[ci]! + 1, s, c.kind === 'BATH');
          const n = (s - last[ci]!) * CHANNELS;
          last[ci] = s;
          try {
            const r = await postJson(agent, api.url, `/v1/equipment/${c.equipmentId}/samples`, body, { authorization: c.authorization });
            if (r.status === 200) samples += n;
            else {
              errors++;
              errorKinds[r.status] = (errorKinds[r.status] ?? 0) + 1;
            }
          } catch (error) {
            errors++;
            const kind = error instanceof Error ? error.message.slice(0, 40) : 'error';
            errorKinds[kind] = (errorKinds[kind] ?? 0) + 1;
          }
          latencies.push(performance.now() - tickStart);
        }
        await sleep(Math.max(0, 1000 - (performance.now() - tickStart)));
      }
    }),
  );
  return {
    async stop() {
      stop = true;
      await run;
      const seconds = (performance.now() - startedAt) / 1000;
      latencies.sort((a, b) => a - b);
      return { samplesPerS: samples / seconds, errors, errorKinds, p50: percentile(latencies, 50), p99: percentile(latencies, 99) };
    },
  };
}

async function serviceLatency(): Promise<ServiceFigures> {
  ensureBuilt();
  const db = await createBenchDatabase();
  const prefix = `ausline-bench:${runId}`;
  const prisma = benchPrisma(db.url);
  const pool = new pg.Pool({ connectionString: db.url, max: 4 });
  pool.on('error', () => {});
  const agent = keepAliveAgent(64);
  let api: ChildService | null = null;
  let worker: ChildService | null = null;
  let stream: { close(): void } | null = null;
  const queue = new Queue(RECOMPUTE_QUEUE, { connection: { url: BENCH_REDIS_URL }, prefix });
  queue.on('error', () => {});
  try {
    const nowS = Math.floor(Date.now() / 1000);
    const inBathSinceMs = (nowS - HISTORY_MIN * 60) * 1000;
    const chargedAtMs = inBathSinceMs - 90 * 60_000;
    const background = await createBenchPlant(prisma, { lines: BACKGROUND_LINES, controllersPerLine: BACKGROUND_CONTROLLERS, channelsPerController: CHANNELS, chargedAtMs, inBathSinceMs });
    const probePlant = await createBenchPlant(prisma, { lines: 1, controllersPerLine: 2, channelsPerController: CHANNELS, chargedAtMs, inBathSinceMs });
    const probeCtl = probePlant.controllers[1]!; // the line's bath
    const probeBatch = probePlant.lines[0]!.batchId;
    const isBath = (c: BenchController) => c.kind === 'BATH';
    const preloaded =
      (await preloadHistory(pool, background.controllers, isBath, nowS - HISTORY_MIN * 60, nowS - 1)) +
      (await preloadHistory(pool, [probeCtl], () => true, nowS - HISTORY_MIN * 60, nowS - 1));
    console.log(`preloaded ${fmt(preloaded, 0)} samples (${HISTORY_MIN} min of history per load)`);

    const metricsPort = await freePort();
    api = await startService('api', serviceEnv({ databaseUrl: db.url, queuePrefix: prefix, port: await freePort() }));
    worker = await startService('worker', serviceEnv({ databaseUrl: db.url, queuePrefix: prefix }, { WORKER_METRICS_PORT: String(metricsPort), RECONCILE_INTERVAL_S: '3600' }));
    const token = await signedInUser(prisma, api.url);
    const events: StreamEvent[] = [];
    stream = await openStream(api.url, token, `batchId=${probeBatch}`, (e) => events.push(e));
    const up = Date.now() + 60_000;
    while (!(await fetch(`http://127.0.0.1:${metricsPort}/metrics`).then((r) => r.ok, () => false))) {
      if (Date.now() > up) throw new Error(`worker did not start: ${worker.stderr.join('')}`);
      await sleep(200);
    }
    // Untimed warm-up: the first recompute of the probe load runs from scratch (and catches up the gap).
    const lastSent = { s: nowS - 1 };
    await probe(api, agent, probeCtl, probeBatch, events, 2, lastSent);

    console.log(`B1: ${PROBES} probes with the plant idle ...`);
    const m0 = await workerMetrics(metricsPort);
    const idleQueue = sampleQueue(queue);
    const idle = await probe(api, agent, probeCtl, probeBatch, events, PROBES, lastSent);
    const queueIdle = await idleQueue.stop();
    const m1 = await workerMetrics(metricsPort);

    const phases: LoadedPhase[] = [];
    const shapes = [
      { name: `one line: ${BACKGROUND_CONTROLLERS} controllers × ${CHANNELS} ch (${BACKGROUND_CONTROLLERS * CHANNELS} samples/s)`, controllers: background.controllers.filter((c) => c.lineIndex === 0) },
      { name: `plant: ${BACKGROUND_LINES} lines × ${BACKGROUND_CONTROLLERS} × ${CHANNELS} ch (${BACKGROUND_LINES * BACKGROUND_CONTROLLERS * CHANNELS} samples/s)`, controllers: background.controllers },
    ];
    let mBefore = m1;
    for (const [i, shape] of shapes.entries()) {
      console.log(`B${i + 2}: probes for up to ${PHASE_BUDGET_S} s while ${shape.name} ...`);
      const bg = startBackground(api, agent, shape.controllers);
      await sleep(3_000); // let the background reach its rate
      const t0 = performance.now();
      const fromMs = Date.now();
      const depth = sampleQueue(queue);
      const probes = await probe(api, agent, probeCtl, probeBatch, events, PROBES, lastSent, PHASE_BUDGET_S * 1000);
      const seconds = (performance.now() - t0) / 1000;
      const queueDepth = await depth.stop();
      const mAfter = await workerMetrics(metricsPort);
      const b = await bg.stop();
      phases.push({
        name: shape.name,
        probes,
        seconds,
        queue: queueDepth,
        finished: await finishedJobs(queue, fromMs, Date.now()),
        backgroundSamplesPerS: b.samplesPerS,
        backgroundErrors: b.errors,
        backgroundErrorKinds: b.errorKinds,
        postP50Ms: b.p50,
        postP99Ms: b.p99,
        worker: { jobs: mAfter.jobs - mBefore.jobs, seconds: mAfter.seconds - mBefore.seconds },
      });
      mBefore = mAfter;
    }
    const predictionRows = Number((await pool.query<{ n: string }>('SELECT count(*) AS n FROM "Prediction" WHERE "batchId" = $1', [probeBatch])).rows[0]!.n);
    return {
      idle,
      workerIdle: { jobs: m1.jobs - m0.jobs, seconds: m1.seconds - m0.seconds },
      queueIdle,
      phases,
      predictionRows,
      workerWarnings: worker.stderr.join('').slice(0, 300),
    };
  } finally {
    stream?.close();
    agent.destroy();
    await queue.close().catch(() => {});
    await worker?.stop();
    await api?.stop();
    await prisma.$disconnect().catch(() => {});
    await pool.end().catch(() => {});
    await db.drop().catch((e: unknown) => console.error(`could not drop ${db.name}: ${String(e)}`));
    await deleteRedisPrefix(prefix).catch(() => {});
  }
}

// =====================================================================================================

async function main(): Promise<void> {
  const before = await machineInfo();
  console.log(`ausline recompute bench, run ${runId}`);
  console.log(`machine at start: ${describeMachine(before)}`);
  const model = process.env.BENCH_SKIP_MODEL === '1' ? null : (console.log('A: model cost ...'), modelCost());
  const service = process.env.BENCH_SKIP_SERVICE === '1' ? null : await serviceLatency();
  const after = await machineInfo();

  console.log('');
  console.log(`ausline recompute bench — ${new Date().toISOString()}`);
  console.log(`machine: ${describeMachine(before)}; load average at the end ${after.loadAverage.join(' / ')}`);
  if (model) {
    console.log('');
    console.log(`A. model cost: 4 h bath log at 1 Hz (14,401 readings), 1,000 uncertainty samples + nominal, medians of ${MODEL_RUNS} (from scratch) / every 10 s step in the window (increments)`);
    printTable(
      ['computation', 'wall ms', 'cpu ms', 'from scratch so far (wall ms)', 'scratch / increment (cpu)'],
      [
        ['from scratch, whole 4 h (memo cleared: a batch the worker never saw)', fmt(model.scratch.wallMs, 1), fmt(model.scratch.cpuMs, 1), '–', '–'],
        ...model.windows.map((w) => [
          `per 10 s increment, ${w.name} (+ state JSON round trip ${fmt(w.jsonMs, 2)} ms)`,
          fmt(w.increment.wallMs, 2),
          fmt(w.increment.cpuMs, 2),
          fmt(w.scratchSoFar.wallMs, 1),
          `× ${fmt(w.scratchSoFar.cpuMs / Math.max(w.increment.cpuMs, 0.001), 0)}`,
        ]),
      ],
    );
    const inc = model.windows.map((w) => w.increment.cpuMs);
    console.log(`increment flatness: late / early = ${fmt(inc[2]! / inc[0]!, 2)} (cpu); state size ${fmt(model.stateKiB, 0)} KiB`);
  }
  if (service) {
    const s = service;
    const sorted = (xs: number[]) => [...xs].sort((a, b) => a - b);
    const row = (name: string, p: ProbeFigures, base?: ProbeFigures) => [
      name,
      `${p.rulesMs.length}/${p.rulesMs.length + p.timeouts}`,
      fmt(percentile(sorted(p.rulesMs), 50), 0),
      fmt(percentile(sorted(p.rulesMs), 95), 0),
      fmt(percentile(sorted(p.predictionMs), 50), 0),
      fmt(percentile(sorted(p.predictionMs), 95), 0),
      base ? `× ${fmt(median(p.rulesMs) / median(base.rulesMs), 1)} / × ${fmt(median(p.predictionMs) / median(base.predictionMs), 1)}` : 'baseline',
    ];
    console.log('');
    console.log(
      `B. post → its batch's event on GET /v1/stream; probe load in the bath (20 thermocouples, ${HISTORY_MIN} min of history at the start); api + worker as built (WORKER_CONCURRENCY 2; recomputes coalesced per batch: at most one active and one waiting); a probe unanswered in 30 s counts as not answered`,
    );
    printTable(
      ['plant while probing', 'answered', 'rules p50 ms', 'rules p95 ms', 'prediction p50 ms', 'prediction p95 ms', 'p50 vs idle (rules / prediction)'],
      [row('idle (baseline)', s.idle), ...s.phases.map((ph) => row(ph.name, ph.probes, s.idle))],
    );
    const mean = (m: WorkerMetrics) => (m.jobs ? `${fmt((m.seconds / m.jobs) * 1000, 0)} ms` : '–');
    console.log(`worker, idle: ${s.workerIdle.jobs} jobs, mean ${mean(s.workerIdle)} (its /metrics); queue at most ${s.queueIdle.maxWaiting} waiting / ${s.queueIdle.maxActive} active`);
    for (const ph of s.phases) {
      console.log(
        `${ph.name}: background ${fmt(ph.backgroundSamplesPerS, 0)} samples/s acknowledged (${ph.backgroundErrors} errors${ph.backgroundErrors ? ` ${JSON.stringify(ph.backgroundErrorKinds)}` : ''}), post p50 ${fmt(ph.postP50Ms, 0)} ms / p99 ${fmt(ph.postP99Ms, 0)} ms; worker ${ph.worker.jobs} jobs in ${fmt(ph.seconds, 0)} s, mean ${mean(ph.worker)}; ` +
          `queue at most ${ph.queue.maxWaiting} waiting / ${ph.queue.maxActive} active (${ph.queue.samples} samples); ${ph.finished.jobs} recomputes of ${ph.finished.batches} batches finished, ${ph.finished.predictionDeferred} left their prediction to a successor`,
      );
    }
    console.log(`probe load: ${s.predictionRows} prediction rows stored (the prediction step ran)`);
    if (s.workerWarnings) console.log(`worker stderr: ${s.workerWarnings}`);
  }
  console.log(
    `JSON ${JSON.stringify({
      bench: 'recompute',
      at: new Date().toISOString(),
      machine: before,
      loadAverageAtEnd: after.loadAverage,
      model,
      service: service && {
        ...service,
        idle: summarize(service.idle),
        phases: service.phases.map((ph) => ({ ...ph, probes: summarize(ph.probes) })),
      },
    })}`,
  );
}

function summarize(p: ProbeFigures) {
  const r = [...p.rulesMs].sort((a, b) => a - b);
  const q = [...p.predictionMs].sort((a, b) => a - b);
  return {
    probes: r.length,
    rulesP50Ms: Math.round(percentile(r, 50)),
    rulesP95Ms: Math.round(percentile(r, 95)),
    predictionP50Ms: Math.round(percentile(q, 50)),
    predictionP95Ms: Math.round(percentile(q, 95)),
    missedPrediction: p.missedPrediction,
    timeouts: p.timeouts,
  };
}

await main();
