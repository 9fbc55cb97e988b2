/**
 * Lab calibration and assignable causes, through the real API and worker: a lab result of a load whose process
 * broke its window (here the minimum hold: the load was pulled from the bath after 25 of the 60 minutes) is judged
 * by its band but left out of the product's running calibration; a result of a clean load is folded in; and when
 * the record is corrected (the hold was 90 minutes after all) the deviation clears and the result joins the
 * calibration. Leaving points with an assignable cause out of the reference is the SPC practice when control limits
 * are revised (Montgomery, Introduction to Statistical Quality Control; common practice). All numbers are invented.
 */
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';

vi.setConfig({ testTimeout: 180_000, hookTimeout: 180_000 });
import { Queue } from 'bullmq';
import { RECOMPUTE_QUEUE, type RecomputeJob } from '@ausline/contracts';
import { isCalibrationState, updateCalibration, type CalibrationState } from '@ausline/compliance';
import { startTestApi } from '../apps/api/test/support/test-api.js';
import { createApiKeyFor, createUserWithSession } from '../apps/api/test/support/principals.js';
import { startWorker, type RunningWorker } from '../apps/worker/src/start-worker.js';
import { WorkerLogger } from '../apps/worker/src/logger.js';
import { enqueueRecompute } from '../apps/worker/src/recompute/enqueue.js';
import { createBatch, furnaceZoneSamples, seedPlant, wiggle, writeLoadEvents, type SeededPlant } from './fixtures/austempering-plant.js';
import { writePrediction } from './fixtures/drift-lots.js';
import { deleteRedisKeys, TEST_REDIS_URL } from './support/redis.js';
import { until } from './support/until.js';

const { api, db, config } = await startTestApi('lab-calibration-assignable-cause');
const prisma = db.prisma;
let worker: RunningWorker;
let queue: Queue<RecomputeJob>;

beforeAll(async () => {
  worker = await startWorker(config, { metricsPort: null, aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') });
  queue = new Queue<RecomputeJob>(RECOMPUTE_QUEUE, { connection: { url: TEST_REDIS_URL }, prefix: config.QUEUE_PREFIX });
});
afterAll(async () => {
  await worker?.close();
  await queue?.close();
  await deleteRedisKeys(config.QUEUE_PREFIX);
});

const MIN = 60_000;
const RAW = { p05: 360, p50: 400, p95: 440 };

async function postLab(batchId: string, hv: number, externalRef: string, headers: Record<string, string>) {
  const res = await fetch(`${api.url}/v1/batches/${batchId}/lab-results`, {
    method: 'POST',
    headers: { 'content-type': 'application/json', ...headers },
    body: JSON.stringify({ kind: 'HARDNESS', scale: 'HV', testStandard: 'ISO 6507-1', readings: [hv - 1, hv + 1], externalRef }),
  });
  expect(res.status).toBe(201);
  const labResultId = ((await res.json()) as { labResult: { id: string } }).labResult.id;
  return until(`the comparison of ${externalRef}`, async () => prisma.labComparison.findFirst({ where: { labResultId } }), { timeoutMs: 90_000, everyMs: 50 });
}

const calibration = () => prisma.productCalibration.findFirst({ where: { quantity: 'hardnessHV' } });
async function stateOf(): Promise<CalibrationState> {
  const row = await calibration();
  if (!row || !isCalibrationState(row.state)) throw new Error('no hardness calibration stored');
  return row.state;
}

/**
 * A load ending 20 minutes ago with a compliant furnace record (zones at 900 °C, window 890–910 °C, 90 min), a 12 s
 * transfer and a bath at 370 °C (window 360–380 °C) logged for 90 minutes, but OUT_OF_BATH stamped after 25 minutes
 * (minimum hold 60): the one deviation is hold-min (CRITICAL).
 */
async function seedShortHold(plant: SeededPlant) {
  const batch = await createBatch(prisma, plant, 'SHORT-HOLD');
  const fullOutOfBath = Date.now() - 20 * MIN;
  const intoBath = fullOutOfBath - 90 * MIN;
  const outOfFurnace = intoBath - 12_000;
  const charged = outOfFurnace - 90 * MIN;
  await writeLoadEvents(prisma, plant, batch.id, { charged, outOfFurnace, intoBath, outOfBath: intoBath + 25 * MIN });
  const samples = furnaceZoneSamples(plant, charged, outOfFurnace);
  plant.tcIds.forEach((channelId, k) => {
    for (let t = intoBath - 2 * MIN, i = 0; t <= fullOutOfBath + MIN; t += 10_000, i++) samples.push({ channelId, t: new Date(t), value: 370 + wiggle(i, 2 + k) });
  });
  await prisma.sample.createMany({ data: samples });
  return { batch, correctedOutOfBath: new Date(fullOutOfBath) };
}

describe('a lab result of a load with an assignable cause does not calibrate; one of a clean load does', () => {
  it('left out while the hold-min deviation stands, judged all the same; folded in once the record is corrected', async () => {
    const plant = await seedPlant(prisma);
    const lab = await createApiKeyFor(api.app, { scope: 'LAB' });
    const viewer = await createUserWithSession(api.app, { roles: ['METALLURGIST'] });
    const clean = [];
    for (let i = 0; i < 4; i++) {
      const b = await createBatch(prisma, plant, `CLEAN-${i + 1}`);
      await writePrediction(prisma, b.id, { hardnessHV: RAW });
      clean.push(b);
    }
    for (const [i, hv] of [382, 379, 384].entries()) expect((await postLab(clean[i]!.id, hv, `C-${i + 1}`, lab.headers)).excludedBy).toBeNull();
    const afterClean = await stateOf();
    expect(afterClean.n).toBe(3);

    // The short hold: its result (720 HV, far above any band of this product) is compared, raises a mismatch, and
    // does not move the calibration.
    const { batch: short, correctedOutOfBath } = await seedShortHold(plant);
    const excluded = await postLab(short.id, 720, 'SHORT-1', lab.headers);
    const holdMin = await prisma.deviation.findFirstOrThrow({ where: { batchId: short.id, rule: 'hold-min' } });
    expect(holdMin.severity).toBe('CRITICAL');
    expect(excluded.excludedBy).toEqual({ reason: 'assignable-cause', causes: [{ deviationId: holdMin.id, rule: 'hold-min', severity: 'CRITICAL' }] });
    expect(excluded.verdict).toBe('above');
    expect(excluded.calibrationApplied).toBe(true); // judged by the calibration of the three before it
    expect(excluded.measured!).toBeGreaterThan(excluded.bandP95!);
    expect(excluded.calibrationAfter).toEqual(excluded.calibrationBefore);
    await until('the short hold’s mismatch', async () => (await prisma.deviation.count({ where: { batchId: short.id, rule: 'model-process-mismatch', conditionPresent: true } })) === 1);
    expect(await stateOf()).toEqual(afterClean);
    const row = (await calibration())!;
    expect(row.excludedResults).toBe(1);
    expect(row.exclusions).toEqual({ results: 1, byRule: { 'hold-min': 1 } });

    // GET /v1/specs/:id/calibration says how many were left out and why.
    const shown = (await (await fetch(`${api.url}/v1/specs/${plant.specId}/calibration`, { headers: viewer.headers })).json()) as any;
    const hardness = shown.quantities.find((q: { quantity: string }) => q.quantity === 'hardnessHV');
    expect(hardness.excluded).toEqual({ results: 1, byRule: { 'hold-min': 1 } });
    expect(hardness.history.find((h: { externalRef: string }) => h.externalRef === 'SHORT-1').excludedBy.causes[0].rule).toBe('hold-min');
    expect(hardness.history.filter((h: { excludedBy: unknown }) => h.excludedBy === null)).toHaveLength(3);

    // A clean load after it moves the calibration: one more result, a new state.
    const fourth = await postLab(clean[3]!.id, 381, 'C-4', lab.headers);
    expect(fourth.excludedBy).toBeNull();
    const afterFourth = await stateOf();
    expect(afterFourth.n).toBe(4);
    expect(afterFourth).not.toEqual(afterClean);

    // The record is corrected: the load came out after 90 minutes. hold-min clears, and the short hold's result is
    // folded in where it stands in the order (after the first three, before C-4).
    await prisma.loadEvent.update({ where: { batchId_kind: { batchId: short.id, kind: 'OUT_OF_BATH' } }, data: { at: correctedOutOfBath } });
    await enqueueRecompute(queue, short.id, 'samples');
    const readmitted = await until('the short hold’s result to be folded in', async () => {
      const r = await prisma.labComparison.findUniqueOrThrow({ where: { id: excluded.id } });
      return r.excludedBy === null ? r : null;
    }, { timeoutMs: 120_000 });
    expect((await prisma.deviation.findUniqueOrThrow({ where: { id: holdMin.id } })).conditionPresent).toBe(false);
    const after = await until('the calibration to count five results', async () => {
      const s = await stateOf();
      return s.n === 5 ? s : null;
    });
    const [shortRow, fourthRow] = await Promise.all([excluded.id, fourth.id].map((id) => prisma.labComparison.findUniqueOrThrow({ where: { id } })));
    expect(shortRow!.residual).toBe(readmitted.residual);
    expect(after).toEqual(updateCalibration(updateCalibration(afterClean, shortRow!.residual!), fourthRow!.residual!));
    const corrected = (await calibration())!;
    expect(corrected.excludedResults).toBe(0);
    expect(corrected.exclusions).toEqual({ results: 0, byRule: {} });
  });
});
