/**
 * Drift across lots (issue 4, item 4) through the real API and worker: a product's lots on one line, in
 * production order, with a slow upward drift of the bath temperature planted from lot 31 and a downward step
 * of the predicted hardness planted from lot 41. The drift settings are set through the API on a draft spec
 * version that is then approved. Each lot is a real batch with load events, a bath log (two thermocouples,
 * one reading every 30 s) and a final prediction row in PC1's contract shape; the worker's outcome jobs
 * (enqueued by its sweep, as after recomputes) chart the values, its drift jobs judge them. Invented numbers.
 */
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';

// Real API + worker + queues on a shared, loaded machine: give hooks and tests room.
vi.setConfig({ testTimeout: 180_000, hookTimeout: 180_000 });
import { Queue } from 'bullmq';
import { DRIFT_QUEUE, OUTCOME_QUEUE } from '@ausline/contracts';
import { createSeededRandom } from '@ausline/compliance';
import { hvFromHbw } from '@ausline/metallurgy';
import { startTestApi } from '../apps/api/test/support/test-api.js';
import { createUserWithSession } from '../apps/api/test/support/principals.js';
import { startWorker, type RunningWorker } from '../apps/worker/src/start-worker.js';
import { WorkerLogger } from '../apps/worker/src/logger.js';
import { DriftTrigger } from '../apps/worker/src/drift/drift-trigger.js';
import { adiWindow, seedPlant, type SeededPlant } from './fixtures/austempering-plant.js';
import { writePrediction } from './fixtures/drift-lots.js';
import { TEST_REDIS_URL, deleteRedisKeys } from './support/redis.js';

const { api, db, config } = await startTestApi('drift-shift');
const prisma = db.prisma;
let worker: RunningWorker;
const queues: Queue[] = [];

beforeAll(async () => {
  worker = await startWorker(config, { metricsPort: null, aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') });
  for (const name of [OUTCOME_QUEUE, DRIFT_QUEUE]) queues.push(new Queue(name, { connection: { url: TEST_REDIS_URL }, prefix: config.QUEUE_PREFIX }));
});
afterAll(async () => {
  await worker?.close();
  for (const q of queues) await q.close();
  await deleteRedisKeys(config.QUEUE_PREFIX);
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
async function call(method: string, path: string, headers: Record<string, string>, body?: unknown) {
  const res = await fetch(`${api.url}${path}`, { method, headers: { 'content-type': 'application/json', ...headers }, body: body === undefined ? undefined : JSON.stringify(body) });
  return { status: res.status, body: (await res.json()) as any };
}
async function idle(): Promise<boolean> {
  for (const q of queues) {
    const c = await q.getJobCounts('active', 'waiting', 'delayed', 'prioritized');
    if (c.active + c.waiting + c.delayed + c.prioritized > 0) return false;
  }
  return true;
}

const LOTS = 60;
const SHIFT_BATH_FROM = 30; // 0-based: lot 31
const SHIFT_HARDNESS_FROM = 40; // lot 41
const MIN = 60_000;
/** Bath mean per lot: 370 °C, lot-to-lot σ 0.8 °C; from lot 31 it climbs 0.4 °C per lot (a slow drift). */
const bathMean = (i: number, z: number) => 370 + 0.8 * z + (i >= SHIFT_BATH_FROM ? 0.4 * (i - SHIFT_BATH_FROM + 1) : 0);
/** Predicted hardness p50 per lot: 400 HV, σ 4 HV; from lot 41 it is 12 HV lower (a step). */
const hardnessP50 = (i: number, z: number) => 400 + 4 * z + (i >= SHIFT_HARDNESS_FROM ? -12 : 0);

describe('a planted drift is caught by the charts before any lot breaks a limit', () => {
  let plant: SeededPlant;
  let quality: { headers: Record<string, string> };
  const codes: string[] = [];
  const means: number[] = [];

  beforeAll(async () => {
    plant = await seedPlant(prisma);
    quality = await createUserWithSession(api.app, { roles: ['QUALITY'], displayName: 'Q. Drift' });
    // Version 2 of the spec, through the API: same window and criteria, drift settings on the draft, approved.
    const v1 = await prisma.productSpecVersion.findUniqueOrThrow({ where: { id: plant.specVersionId } });
    const draft = await call('POST', `/v1/specs/${plant.specId}/versions`, quality.headers, { chemistryLimits: v1.chemistryLimits, processWindow: v1.processWindow, acceptanceCriteria: v1.acceptanceCriteria });
    expect(draft.status).toBe(201);
    const bad = await call('PUT', `/v1/specs/${plant.specId}/versions/${draft.body.version}/drift-charts`, quality.headers, { phaseILots: 20, charts: { ewma: { lambda: 1.5 } } });
    expect(bad.status).toBe(400);
    expect(bad.body.issues[0].path).toBe('charts.ewma.lambda');
    const put = await call('PUT', `/v1/specs/${plant.specId}/versions/${draft.body.version}/drift-charts`, quality.headers, { phaseILots: 20 });
    expect(put.status).toBe(200);
    expect((await call('POST', `/v1/specs/${plant.specId}/versions/${draft.body.version}/approve`, quality.headers)).status).toBe(200);
    const again = await call('PUT', `/v1/specs/${plant.specId}/versions/${draft.body.version}/drift-charts`, quality.headers, { phaseILots: 30 });
    expect(again.status).toBe(409);

    // The lots: one batch every 2 h, ending a day ago; 60 min in the bath.
    const rng = createSeededRandom(20261207);
    const t0 = Date.now() - 24 * 3_600_000 - LOTS * 2 * 3_600_000;
    const samples: { channelId: string; t: Date; value: number }[] = [];
    for (let i = 0; i < LOTS; i++) {
      const code = `DRIFT-${String(i + 1).padStart(3, '0')}`;
      codes.push(code);
      const batch = await prisma.batch.create({ data: { code, lineId: plant.lineId, heatId: plant.heatId, specVersionId: plant.specVersionId, partCount: 48, weightKg: 420, sectionShape: 'CYLINDER', sectionSizeMm: 25, status: 'DONE' } });
      const into = t0 + i * 2 * 3_600_000;
      await prisma.loadEvent.createMany({
        data: [
          { batchId: batch.id, kind: 'CHARGED', at: new Date(into - 91 * MIN), equipmentId: plant.furnaceId },
          { batchId: batch.id, kind: 'OUT_OF_FURNACE', at: new Date(into - 12_000), equipmentId: plant.furnaceId },
          { batchId: batch.id, kind: 'INTO_BATH', at: new Date(into), equipmentId: plant.bathId },
          { batchId: batch.id, kind: 'OUT_OF_BATH', at: new Date(into + 60 * MIN), equipmentId: plant.bathId },
        ],
      });
      const mean = bathMean(i, rng.nextNormal());
      means.push(mean);
      for (const [k, channelId] of plant.tcIds.entries()) {
        for (let t = into, j = 0; t <= into + 60 * MIN; t += 30_000, j++) samples.push({ channelId, t: new Date(t), value: mean + 0.3 * Math.sin(j * 0.7 + k) });
      }
      const p50 = hardnessP50(i, rng.nextNormal());
      const ceiling = 0.72 + 0.01 * rng.nextNormal();
      await writePrediction(prisma, batch.id, { hardnessHV: { p05: p50 - 40, p50, p95: p50 + 40 }, ceilingFraction: { p05: ceiling - 0.05, p50: ceiling, p95: ceiling + 0.05 } });
    }
    await prisma.sample.createMany({ data: samples });
  });

  it('charts every lot, estimates Phase I from the first 20, and raises one drift deviation per planted drift', async () => {
    // The sweep finds 60 batches with a final prediction and an end of hold that no outcome has seen: exactly
    // what follows each batch's recompute in production.
    const swept = await worker.app.get(DriftTrigger).sweep();
    expect(swept.outcomes).toBe(LOTS);
    await until('all outcomes and drift jobs', async () => (await prisma.batchOutcome.count()) === LOTS && (await idle()) && (await prisma.driftChart.count({ where: { productSpecId: plant.specId, lotCount: LOTS } })) >= 2);
    await until('queues idle', idle);

    const viewer = quality.headers;
    const bath = await call('GET', `/v1/drift?specId=${plant.specId}&lineId=${plant.lineId}&metric=bath-mean-temp-hold`, viewer);
    expect(bath.status).toBe(200);
    const c = bath.body;
    expect(c.status).toBe('monitoring');
    expect(c.lotCount).toBe(LOTS);
    expect(c.limits).toMatchObject({ version: 1, source: 'phase-i', sigmaMethod: 'average-moving-range' });
    expect(c.phaseI.lots.length).toBe(20);
    expect(c.phaseI.lots.map((l: { lotId: string }) => l.lotId)).toEqual(codes.slice(0, 20));
    expect(c.points.length).toBe(LOTS - 20);
    expect(c.specLimits).toEqual({ lower: 360, upper: 380 });

    const episodes = c.episodes as { onsetLotId: string; direction: string; deviation: { id: string; status: string } | null }[];
    expect(episodes).toHaveLength(1);
    const onsetIndex = codes.indexOf(episodes[0]!.onsetLotId);
    const breach = c.firstSpecBreach as { lotId: string; value: number } | null;
    const firstOver = means.findIndex((m) => m > 380);
    console.log(
      `bath mean: Phase I centre ${c.limits.centre.toFixed(2)} °C, σ̂ ${c.limits.sigma.toFixed(3)} °C (limits v1 from lots 1–20); drift planted from lot ${SHIFT_BATH_FROM + 1} ` +
        `(+0.4 °C/lot); signal at lot ${onsetIndex + 1} (${episodes[0]!.direction}, ${(c.episodes[0].keys as string[]).join(', ')}); first lot beyond the 380 °C limit: ` +
        `${breach ? `${codes.indexOf(breach.lotId) + 1} (${breach.value.toFixed(2)} °C)` : 'none'}; lead ${c.leadLotsBeforeSpecBreach ?? 'n/a'} lots`,
    );
    expect(onsetIndex).toBeGreaterThanOrEqual(SHIFT_BATH_FROM);
    expect(episodes[0]!.direction).toBe('up');
    // Caught before any lot breaks the bath limit (the drift is planted to cross it near the end).
    expect(firstOver).not.toBe(-1);
    expect(firstOver).toBeGreaterThan(onsetIndex);
    if (breach) expect(codes.indexOf(breach.lotId)).toBeGreaterThan(onsetIndex);
    expect(means.slice(0, onsetIndex + 1).every((m) => m >= 360 && m <= 380)).toBe(true);

    // The deviation: filed under the lot that signalled, with the chart data that shows why.
    const deviation = await prisma.deviation.findUniqueOrThrow({ where: { id: episodes[0]!.deviation!.id } });
    const onsetBatch = await prisma.batch.findUniqueOrThrow({ where: { code: episodes[0]!.onsetLotId } });
    expect(deviation).toMatchObject({ rule: 'drift', severity: 'MAJOR', status: 'OPEN', batchId: onsetBatch.id, productSpecId: plant.specId, lineId: plant.lineId });
    expect(deviation.dedupKey).toBe(`drift:${plant.specId}:${plant.lineId}:bath-mean-temp-hold:v1:${onsetBatch.id}`);
    expect(deviation.message).toMatch(/mean bath temperature during hold \(°C\) drifting up from lot DRIFT-0\d\d/);
    expect(deviation.message).toMatch(/no lot beyond a spec limit at the signal/);
    const details = deviation.details as any;
    expect(details.specLimitBrokenBeforeSignal).toBe(false);
    expect(details.evidence.schema).toBe('ausline.drift-evidence/v1');
    expect(details.evidence.signal.lotId).toBe(episodes[0]!.onsetLotId);
    expect(details.evidence.points.at(-1).lotId).toBe(episodes[0]!.onsetLotId);
    expect(details.evidence.limits.version).toBe(1);
    console.log(`drift deviation: ${deviation.message}`);

    // Predicted hardness, charted in the spec's scale (HBW by the E140 rows): one downward episode after lot 41.
    const hard = await call('GET', `/v1/drift?specId=${plant.specId}&lineId=${plant.lineId}&metric=predicted-hardness-p50&last=10`, viewer);
    expect(hard.body.unit).toBe('HBW');
    expect(hard.body.points.length).toBe(10);
    expect(hard.body.pointsFrom).toBe(LOTS - 20 - 10);
    const he = hard.body.episodes as { onsetLotId: string; direction: string }[];
    expect(he).toHaveLength(1);
    expect(he[0]!.direction).toBe('down');
    expect(codes.indexOf(he[0]!.onsetLotId)).toBeGreaterThanOrEqual(SHIFT_HARDNESS_FROM);
    // The spec's hardness band HBW 341–444 is ≈ 360–472 HV (E140 rows, metallurgy.md §6.4 [F2]); the shifted p50 (≈ 388 HV) stays inside.
    expect(hvFromHbw(341)!).toBeGreaterThan(355);
    expect(hard.body.firstSpecBreach).toBeNull();
    console.log(`predicted hardness: limits ${hard.body.limits.centre.toFixed(1)} ± ${hard.body.limits.sigma.toFixed(2)} HBW; step of −12 HV planted at lot ${SHIFT_HARDNESS_FROM + 1}, signal at lot ${codes.indexOf(he[0]!.onsetLotId) + 1}`);

    // The in-control metric raised nothing; a metric the spec cannot judge says why.
    const margin = await call('GET', `/v1/drift?specId=${plant.specId}&lineId=${plant.lineId}&metric=bainite-ceiling-margin`, viewer);
    expect(margin.body.status).toBe('monitoring');
    expect(margin.body.episodes).toEqual([]);
    const blocky = await call('GET', `/v1/drift?specId=${plant.specId}&lineId=${plant.lineId}&metric=blocky-austenite-margin`, viewer);
    expect(blocky.body.status).toBe('not-applicable');
    const measured = await call('GET', `/v1/drift?specId=${plant.specId}&lineId=${plant.lineId}&metric=measured-hardness`, viewer);
    expect(measured.body.status).toBe('collecting-phase-i');
    expect(await prisma.deviation.count({ where: { rule: 'drift', productSpecId: plant.specId } })).toBe(2);

    const overview = await call('GET', `/v1/drift/charts?specId=${plant.specId}`, viewer);
    expect(overview.body.charts.map((x: { metric: string; status: string }) => `${x.metric}:${x.status}`).sort()).toEqual([
      'bainite-ceiling-margin:monitoring',
      'bath-mean-temp-hold:monitoring',
      'blocky-austenite-margin:not-applicable',
      'measured-hardness:collecting-phase-i',
      'predicted-hardness-p50:monitoring',
    ]);

    // Running the drift job again changes nothing (same deviations, no new audit rows).
    const audits = await prisma.deviationAudit.count();
    await worker.app.get((await import('../apps/worker/src/drift/drift.service.js')).DriftService).evaluate(plant.specId, plant.lineId);
    expect(await prisma.deviationAudit.count()).toBe(audits);
  });

  it('answers bad queries with a 400 naming the field, unknown ids with 404', async () => {
    const q = await call('GET', `/v1/drift?specId=${plant.specId}&lineId=${plant.lineId}&metric=hardness`, quality.headers);
    expect(q.status).toBe(400);
    expect(q.body.issues[0].path).toBe('query.metric');
    const nf = await call('GET', `/v1/drift?specId=${plant.lineId}&lineId=${plant.lineId}&metric=measured-hardness`, quality.headers);
    expect(nf.status).toBe(404);
    expect((await call('GET', `/v1/specs/${plant.specId}/drift-charts`, quality.headers)).body.resolved.phaseILots).toBe(20);
  });
});

// Bath window of the fixture, for the reader: 360–380 °C (practice.md §2.2 ADI salt range, inside 230–400 °C [S33]).
void adiWindow;
