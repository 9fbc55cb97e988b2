/**
 * In control, the drift charts stay quiet at the rate their published run-length tables predict.
 *
 * How (to keep the runtime in seconds):
 *  1. the pure monitor (libs/compliance stepDriftMonitor) is fed seeded in-control lots; after each signal that
 *     would raise a drift deviation it is restarted (restartDriftMonitor: EWMA to the centre, CUSUM to zero),
 *     so every run is a zero-state run as in the tables; the mean run length is compared with the published ARL₀;
 *  2. the worker's real drift job judges 4,000 in-control lots per chart whose values are written straight to
 *     the DriftValue table (what the outcome job would have charted), under limits specified in the spec (the
 *     tables assume known parameters). The drift deviations it opens must be exactly the episodes of the pure
 *     chart over the same values, and about as many as 4,000/ARL₀ (the job does not restart a chart after a
 *     signal, so a chart that hovers at its limit makes one merged episode; see libs/compliance lots/).
 */
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';

vi.setConfig({ testTimeout: 180_000, hookTimeout: 180_000 });
import { Queue } from 'bullmq';
import { DRIFT_QUEUE, type DriftJob } from '@ausline/contracts';
import {
  chartDrift,
  createSeededRandom,
  raisesDeviation,
  resolveDriftSettings,
  restartDriftMonitor,
  specifiedLimits,
  startDriftMonitor,
  stepDriftMonitor,
  type DriftChartConfigOverrides,
} from '@ausline/compliance';
import { startWorker, type RunningWorker } from '../apps/worker/src/start-worker.js';
import { WorkerLogger } from '../apps/worker/src/logger.js';
import { enqueueDrift } from '../apps/worker/src/drift/enqueue.js';
import { seedPlant } from './fixtures/austempering-plant.js';
import { createTestDatabase } from './support/database.js';
import { TEST_REDIS_URL, deleteRedisKeys, testQueuePrefix } from './support/redis.js';
import { testAppEnv } from './support/env.js';
import { loadConfig } from '@ausline/contracts';

const EWMA_ONLY: DriftChartConfigOverrides = { ewma: { enabled: true, lambda: 0.2, L: 2.962 }, cusum: { enabled: false }, runRules: { westernElectric: [] } };
const CUSUM_ONLY: DriftChartConfigOverrides = { ewma: { enabled: false }, cusum: { enabled: true, k: 0.5, h: 4.77 }, runRules: { westernElectric: [] } };

/** Mean zero-state run length to the first deviation-raising signal, with its standard error. */
function monitorArl(config: DriftChartConfigOverrides, runs: number, seed: number) {
  const rng = createSeededRandom(seed);
  let state = startDriftMonitor({ product: 'P', line: 'L', metric: 'bath-mean-temp-hold', limits: specifiedLimits(0, 1), config });
  const lengths: number[] = [];
  let n = 0;
  let lot = 0;
  while (lengths.length < runs) {
    n++;
    const step = stepDriftMonitor(state, { lotId: `L${lot++}`, value: rng.nextNormal() });
    state = step.state;
    if (step.signals.some(raisesDeviation)) {
      lengths.push(n);
      n = 0;
      state = restartDriftMonitor(state);
    }
  }
  const mean = lengths.reduce((a, b) => a + b, 0) / runs;
  const sd = Math.sqrt(lengths.reduce((a, b) => a + (b - mean) ** 2, 0) / (runs - 1));
  return { mean, se: sd / Math.sqrt(runs) };
}

describe('in-control run length of the pure monitor against the published tables', () => {
  it('EWMA λ = 0.2, L = 2.962: ARL₀ ≈ 500', () => {
    // Published: ARL₀ = 500 for λ = 0.2, L = 2.962 (Lucas & Saccucci 1990, Technometrics 32, as tabulated in
    // Montgomery, Introduction to SQC; practice.md §4.3).
    const r = monitorArl(EWMA_ONLY, 160, 41);
    console.log(`EWMA in control: mean run length ${r.mean.toFixed(0)} ± ${r.se.toFixed(0)} (SE) over 160 zero-state runs; published ARL₀ 500`);
    expect(Math.abs(r.mean - 500)).toBeLessThan(3.5 * r.se);
  });

  it('tabular CUSUM k = 0.5, h = 4.77: ARL₀ ≈ 370', () => {
    // Published: h = 4.77 gives a two-sided ARL₀ of 370 at k = 0.5 (Hawkins 1993, as tabulated in Montgomery,
    // Introduction to SQC; libs/compliance drift/config.ts).
    const r = monitorArl(CUSUM_ONLY, 160, 42);
    console.log(`CUSUM in control: mean run length ${r.mean.toFixed(0)} ± ${r.se.toFixed(0)} (SE) over 160 zero-state runs; published ARL₀ 370`);
    expect(Math.abs(r.mean - 370)).toBeLessThan(3.5 * r.se);
  });
});

const db = await createTestDatabase();
const prisma = db.prisma;
const prefix = testQueuePrefix('drift-long');
const config = loadConfig(testAppEnv({ databaseUrl: db.url, queuePrefix: prefix }, { LOG_LEVEL: 'silent' }));

describe('a long in-control series through the worker drift job', () => {
  let worker: RunningWorker;
  let queue: Queue<DriftJob>;

  beforeAll(async () => {
    worker = await startWorker(config, { metricsPort: null, aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') });
    queue = new Queue<DriftJob>(DRIFT_QUEUE, { connection: { url: TEST_REDIS_URL }, prefix });
  });
  afterAll(async () => {
    await worker?.close();
    await queue?.close();
    await deleteRedisKeys(prefix);
  });

  it('opens exactly the pure chart’s episodes, about lots/ARL₀ of them, and nothing more on a second run', async () => {
    const LOTS = 4000;
    const plant = await seedPlant(prisma);
    // Bath mean: EWMA alone, known centre 370 °C and σ 0.8 °C. Measured hardness (HBW): the default scheme
    // (EWMA + CUSUM + WE1), known centre 390 HBW and σ 8 HBW.
    const settings = {
      metrics: {
        'bath-mean-temp-hold': { limits: { centre: 370, sigma: 0.8 }, charts: EWMA_ONLY },
        'measured-hardness': { limits: { centre: 390, sigma: 8 } },
      },
    };
    await prisma.productSpecVersion.update({ where: { id: plant.specVersionId }, data: { driftCharts: settings as object } });
    const t0 = Date.parse('2025-01-01T00:00:00Z');
    const codes = Array.from({ length: LOTS }, (_, i) => `LR-${String(i + 1).padStart(5, '0')}`);
    await prisma.batch.createMany({
      data: codes.map((code) => ({ code, lineId: plant.lineId, heatId: plant.heatId, specVersionId: plant.specVersionId, partCount: 10, weightKg: 100, sectionShape: 'CYLINDER' as const, sectionSizeMm: 25, status: 'DONE' as const })),
    });
    const batches = await prisma.batch.findMany({ where: { code: { in: codes } }, select: { id: true, code: true } });
    const idOf = new Map(batches.map((b) => [b.code, b.id]));
    const rng = createSeededRandom(20261208);
    const bath = codes.map((code) => ({ lotId: code, batchId: idOf.get(code)!, value: 370 + 0.8 * rng.nextNormal() }));
    const hardness = codes.map((code) => ({ lotId: code, batchId: idOf.get(code)!, value: 390 + 8 * rng.nextNormal() }));
    const rows = (metric: string, unit: string, lots: typeof bath) =>
      lots.map((l, i) => ({ batchId: l.batchId, productSpecId: plant.specId, lineId: plant.lineId, metric, value: l.value, unit, orderAt: new Date(t0 + i * 3_600_000), source: { test: 'precomputed' } }));
    await prisma.driftValue.createMany({ data: [...rows('bath-mean-temp-hold', '°C', bath), ...rows('measured-hardness', 'HBW', hardness)] });

    const started = Date.now();
    await enqueueDrift(queue, plant.specId, plant.lineId, 'manual');
    await waitForCharts(prisma, plant.specId, LOTS);
    const jobMs = Date.now() - started;

    const resolved = resolveDriftSettings(settings);
    const expected = (metric: 'bath-mean-temp-hold' | 'measured-hardness', lots: typeof bath, centre: number, sigma: number) =>
      chartDrift({ product: 'P', line: 'L', metric, lots, limits: { version: 1, source: 'specified', limits: specifiedLimits(centre, sigma) }, settings: resolved, specLimits: null }).episodes;
    const bathEpisodes = expected('bath-mean-temp-hold', bath, 370, 0.8);
    const hardEpisodes = expected('measured-hardness', hardness, 390, 8);
    const deviations = await prisma.deviation.findMany({ where: { rule: 'drift', productSpecId: plant.specId }, include: { batch: { select: { code: true } } } });
    const onsets = (metric: string) => deviations.filter((d) => d.dedupKey.includes(`:${metric}:`)).map((d) => d.batch!.code).sort();
    console.log(
      `${LOTS} in-control lots per chart, drift job ${jobMs} ms: bath mean (EWMA alone) ${bathEpisodes.length} drift deviations (≈ ${LOTS}/500 = ${LOTS / 500} expected ` +
        `from the published ARL₀); measured hardness (EWMA + CUSUM + WE1) ${hardEpisodes.length} (≈ ${LOTS}/190 = ${(LOTS / 190).toFixed(0)} from the combined ARL₀ ≈ 190 ` +
        `of libs/compliance drift/config.ts, our simulation)`,
    );
    expect(onsets('bath-mean-temp-hold')).toEqual(bathEpisodes.map((e) => e.startLotId).sort());
    expect(onsets('measured-hardness')).toEqual(hardEpisodes.map((e) => e.startLotId).sort());
    // Poisson ranges around the expected counts (mean 8 → [1, 18]; mean 21 → [8, 38]; each side < 0.1 %).
    expect(bathEpisodes.length).toBeGreaterThanOrEqual(1);
    expect(bathEpisodes.length).toBeLessThanOrEqual(18);
    expect(hardEpisodes.length).toBeGreaterThanOrEqual(8);
    expect(hardEpisodes.length).toBeLessThanOrEqual(38);
    expect(deviations.every((d) => d.status === 'OPEN' && d.lineId === plant.lineId)).toBe(true);
    const limits = await prisma.driftLimits.findMany({ where: { productSpecId: plant.specId } });
    expect(limits.map((l) => `${l.metric}:v${l.version}:${l.source}`).sort()).toEqual(['bath-mean-temp-hold:v1:specified', 'measured-hardness:v1:specified']);

    // A second run over the same lots changes nothing.
    const audits = await prisma.deviationAudit.count();
    const before = await prisma.driftChart.findMany({ where: { productSpecId: plant.specId }, orderBy: { metric: 'asc' } });
    await enqueueDrift(queue, plant.specId, plant.lineId, 'manual');
    await until('the second evaluation', async () => {
      const now = await prisma.driftChart.findMany({ where: { productSpecId: plant.specId }, orderBy: { metric: 'asc' } });
      return now.every((c, i) => c.evaluatedAt > before[i]!.evaluatedAt);
    });
    expect(await prisma.deviationAudit.count()).toBe(audits);
    expect(await prisma.deviation.count({ where: { rule: 'drift' } })).toBe(deviations.length);
  }, 180_000);
});

async function until<T>(what: string, probe: () => Promise<T | null | undefined | false>, timeoutMs = 120_000): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const value = await probe();
    if (value) return value;
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 100));
  }
}

function waitForCharts(prisma: typeof db.prisma, specId: string, lots: number) {
  return until('both charts evaluated', async () => (await prisma.driftChart.count({ where: { productSpecId: specId, lotCount: lots, status: 'monitoring' } })) === 2);
}
