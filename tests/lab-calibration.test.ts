/**
 * Lab results against predictions (issue 4, item 5) through the real API and worker: lab results are posted
 * to POST /v1/batches/:id/lab-results, the api enqueues a recompute, the worker's outcome job follows the
 * completed recompute and compares each result with the batch's latest predicted band (corrected by the
 * product's running calibration of the results before it). Outside → a 'model-process-mismatch' deviation;
 * inside → none. GET /v1/specs/:id/calibration shows the calibration and how much later bands narrowed and
 * moved. Predictions are written straight to the database in PC1's contract shape (tests/fixtures/drift-lots.ts);
 * all numbers are invented.
 */
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';

// Real API + worker + queues on a shared, loaded machine: give hooks and tests room.
vi.setConfig({ testTimeout: 180_000, hookTimeout: 180_000 });
import { startTestApi } from '../apps/api/test/support/test-api.js';
import { createApiKeyFor, createUserWithSession } from '../apps/api/test/support/principals.js';
import { startWorker, type RunningWorker } from '../apps/worker/src/start-worker.js';
import { WorkerLogger } from '../apps/worker/src/logger.js';
import { hvFromHrc } from '@ausline/metallurgy';
import { createBatch, seedPlant, type SeededPlant } from './fixtures/austempering-plant.js';
import { writePrediction } from './fixtures/drift-lots.js';
import { deleteRedisKeys } from './support/redis.js';

const { api, db, config } = await startTestApi('lab-calibration');
const prisma = db.prisma;
let worker: RunningWorker;

beforeAll(async () => {
  worker = await startWorker(config, { metricsPort: null, aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') });
});
afterAll(async () => {
  await worker?.close();
  await deleteRedisKeys(config.QUEUE_PREFIX);
});

async function until<T>(what: string, probe: () => Promise<T | null | undefined | false>, timeoutMs = 90_000): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const value = await probe();
    if (value) return value;
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

async function post(path: string, body: unknown, headers: Record<string, string>) {
  const res = await fetch(`${api.url}${path}`, { method: 'POST', headers: { 'content-type': 'application/json', ...headers }, body: JSON.stringify(body) });
  return { status: res.status, body: (await res.json()) as Record<string, unknown> };
}
async function get(path: string, headers: Record<string, string>) {
  const res = await fetch(`${api.url}${path}`, { headers });
  return { status: res.status, body: (await res.json()) as any };
}

/** Posts a lab result and waits until the worker has compared it (its LabComparison rows exist). */
async function postLab(batchId: string, body: Record<string, unknown>, headers: Record<string, string>) {
  const res = await post(`/v1/batches/${batchId}/lab-results`, body, headers);
  expect(res.status).toBe(201);
  const labResultId = (res.body.labResult as { id: string }).id;
  return until(`the comparison of ${String(body.externalRef)}`, async () => {
    const rows = await prisma.labComparison.findMany({ where: { labResultId } });
    return rows.length > 0 ? rows : null;
  });
}

const mismatches = (batchId: string) => prisma.deviation.findMany({ where: { batchId, rule: 'model-process-mismatch' } });

// Raw ensemble band of every prediction below: HV p05 360 / p50 400 / p95 440 (invented).
const RAW = { p05: 360, p50: 400, p95: 440 };

describe('lab results against predicted bands, with a running calibration', () => {
  let plant: SeededPlant;
  let lab: { headers: Record<string, string> };
  let viewer: { headers: Record<string, string> };

  beforeAll(async () => {
    plant = await seedPlant(prisma);
    lab = await createApiKeyFor(api.app, { scope: 'LAB' });
    viewer = await createUserWithSession(api.app, { roles: ['METALLURGIST'] });
  });

  it('judges each result by the calibration of the ones before it: inside → nothing, outside the calibrated band → mismatch', async () => {
    // Six loads whose lab hardness sits ~18 HV below the predicted p50 with a few HV of scatter: all inside the
    // raw ±40 HV band, so nothing is raised, while the calibration learns the bias and the small spread.
    const measuredHV = [380, 386, 383, 378, 384, 381];
    const batches: { id: string }[] = [];
    for (let i = 0; i < measuredHV.length + 2; i++) {
      const b = await createBatch(prisma, plant, `CAL-${i + 1}`);
      await writePrediction(prisma, b.id, { hardnessHV: RAW });
      batches.push(b);
    }
    for (let i = 0; i < measuredHV.length; i++) {
      const rows = await postLab(batches[i].id, { kind: 'HARDNESS', scale: 'HV', testStandard: 'ISO 6507-1', testForce: 'HV10', readings: [measuredHV[i] - 1, measuredHV[i] + 1], externalRef: `HV-${i + 1}` }, lab.headers);
      expect(rows[0]!.verdict).toBe('inside');
      expect(rows[0]!.calibrationApplied).toBe(i >= 3); // in force from the 4th result (3 before it)
    }
    for (const b of batches.slice(0, 6)) expect(await mismatches(b.id)).toHaveLength(0);

    // 415 HV is inside the raw band (360–440) but outside what this product's lab has shown: judged
    // against the calibrated band (≈ 361–411 HV after six results, the prior's spread still fading), a mismatch.
    const [outlier] = await postLab(batches[6].id, { kind: 'HARDNESS', scale: 'HV', testStandard: 'ISO 6507-1', readings: [414, 416], externalRef: 'HV-7' }, lab.headers);
    expect(outlier!.calibrationApplied).toBe(true);
    expect(outlier!.verdict).toBe('above');
    expect(outlier!.bandP95!).toBeLessThan(415);
    expect(outlier!.rawP95).toBe(440);
    const raised = await until('the mismatch deviation', async () => {
      const d = await mismatches(batches[6].id);
      return d.length ? d : null;
    });
    expect(raised).toHaveLength(1);
    expect(raised[0]!.severity).toBe('MAJOR');
    expect(raised[0]!.message).toMatch(/Hardness 415 HV .* above the predicted band/);
    expect(raised[0]!.message).toMatch(/calibrated by 6 earlier results/);
    expect(raised[0]!.details).toMatchObject({ measured: 415, verdict: 'above', calibrationApplied: true, rawBand: RAW });
    console.log(`mismatch raised: ${raised[0]!.message}`);

    // A Rockwell result converted by the E140 rows, back in line with the product: inside, nothing raised.
    // HRC 39.0 → 382.6 HV by linear interpolation between the E140 rows HRC 35 = 345 HV and HRC 40 = 392 HV
    // (metallurgy.md §6.4 [F2]).
    expect(hvFromHrc(39)).toBeCloseTo(382.6, 1);
    const [rockwell] = await postLab(batches[7].id, { kind: 'HARDNESS', scale: 'HRC', testStandard: 'ISO 6508-1', readings: [38.9, 39.1, 39.0], externalRef: 'HRC-8' }, lab.headers);
    expect(rockwell!.measured!).toBeCloseTo(382.6, 1);
    expect(rockwell!.measuredDetail).toMatchObject({ scale: 'HRC', readings: 3, convertedBy: expect.stringMatching(/E140/) });
    expect(rockwell!.verdict).toBe('inside');
    expect(await mismatches(batches[7].id)).toHaveLength(0);

    // The calibration after 8 results and its effect on a later prediction's band.
    const cal = await get(`/v1/specs/${plant.specId}/calibration`, viewer.headers);
    expect(cal.status).toBe(200);
    const hv = cal.body.quantities.find((q: { quantity: string }) => q.quantity === 'hardnessHV');
    expect(hv.calibration.n).toBe(8);
    expect(hv.calibration.inForce).toBe(true);
    expect(hv.history.map((h: { externalRef: string }) => h.externalRef)).toEqual(['HV-1', 'HV-2', 'HV-3', 'HV-4', 'HV-5', 'HV-6', 'HV-7', 'HRC-8']);
    expect(hv.history[6].verdict).toBe('above');
    expect(hv.calibration.bias).toBeLessThan(-8);
    expect(hv.calibration.bias).toBeGreaterThan(-20);
    const effect = hv.effect;
    expect(effect.batches.length).toBe(8);
    const e0 = effect.batches[0];
    console.log(
      `hardness calibration after ${hv.calibration.n} results: bias ${hv.calibration.bias.toFixed(1)} HV, spread ${hv.calibration.sd.toFixed(1)} HV (ν ${hv.calibration.dof.toFixed(2)}, κ ${hv.calibration.kappa.toFixed(2)}); ` +
        `band of ${e0.batchCode}: raw ${e0.raw.p05}–${e0.raw.p95} HV (width ${e0.rawWidth}) → calibrated ${e0.calibrated.p05.toFixed(1)}–${e0.calibrated.p95.toFixed(1)} HV (width ${e0.calibratedWidth.toFixed(1)}): ` +
        `${e0.narrowedPct.toFixed(1)} % narrower, moved ${e0.shift.toFixed(1)} HV`,
    );
    expect(effect.meanNarrowedPct).toBeGreaterThan(20);
    expect(effect.meanShift).toBeLessThan(-8);
  });

  it('before any calibration the raw band judges: a result outside it raises a mismatch saying so; retained austenite and tensile too', async () => {
    // A second product, so that its calibration starts empty.
    const spec = await prisma.productSpec.create({ data: { code: `P-RAW-${Date.now()}`, name: 'ADI gear blank', material: 'DUCTILE_IRON' } });
    const version = await prisma.productSpecVersion.create({
      data: { specId: spec.id, version: 1, status: 'APPROVED', chemistryLimits: {}, processWindow: (await prisma.productSpecVersion.findUniqueOrThrow({ where: { id: plant.specVersionId } })).processWindow as object, acceptanceCriteria: {} },
    });
    const b = await createBatch(prisma, { ...plant, specId: spec.id, specVersionId: version.id }, 'RAW-1');
    await writePrediction(prisma, b.id, { hardnessHV: RAW, retainedAusteniteFraction: { p05: 0.2, p50: 0.25, p95: 0.3 }, tensileMPa: { p05: 1050, p50: 1150, p95: 1250 } });
    const [hard] = await postLab(b.id, { kind: 'HARDNESS', scale: 'HV', testStandard: 'ISO 6507-1', readings: [455], externalRef: 'RAW-HV' }, lab.headers);
    expect(hard!.calibrationApplied).toBe(false);
    expect(hard!.verdict).toBe('above');
    const [ra] = await postLab(b.id, { kind: 'RETAINED_AUSTENITE', method: 'XRD', testStandard: 'ASTM E975', volumePct: 38, externalRef: 'RAW-RA' }, lab.headers);
    expect(ra).toMatchObject({ quantity: 'retainedAusteniteFraction', measured: 0.38, verdict: 'above' });
    const [tensile] = await postLab(b.id, { kind: 'TENSILE', testStandard: 'ISO 6892-1', rmMPa: 1120, rp02MPa: 830, elongationPct: 9, externalRef: 'RAW-T' }, lab.headers);
    expect(tensile).toMatchObject({ quantity: 'tensileMPa', measured: 1120, verdict: 'inside' });
    const raised = await until('two mismatch deviations', async () => {
      const d = await mismatches(b.id);
      return d.length === 2 ? d : null;
    });
    const messages = raised.map((d) => d.message).sort();
    console.log(messages.join('\n'));
    expect(messages[0]).toMatch(/^Hardness 455 HV .* above the predicted band 360 HV–440 HV .*raw ensemble band \(calibration not yet in force\)/);
    expect(messages[1]).toMatch(/^Retained austenite 38\.0 vol% .* above the predicted band 20\.0 vol%–30\.0 vol%/);
    expect(raised.every((d) => d.productSpecId === spec.id && d.lineId === plant.lineId)).toBe(true);
  });

  it('a newer prediction re-judges the result: the mismatch clears when the new band holds it', async () => {
    const b = await createBatch(prisma, plant, 'REPRED-1');
    await writePrediction(prisma, b.id, { hardnessHV: { p05: 300, p50: 320, p95: 340 } });
    const [first] = await postLab(b.id, { kind: 'HARDNESS', scale: 'HV', testStandard: 'ISO 6507-1', readings: [470], externalRef: 'RP-1' }, lab.headers);
    expect(first!.verdict).toBe('above');
    await until('the mismatch', async () => (await mismatches(b.id)).length === 1);
    // The heat's chemistry was corrected and the batch re-predicted much harder; the sweep notices the new
    // prediction and the outcome job re-judges the old lab result against it.
    await writePrediction(prisma, b.id, { hardnessHV: { p05: 455, p50: 485, p95: 515 } });
    const swept = await worker.app.get((await import('../apps/worker/src/drift/drift-trigger.js')).DriftTrigger).sweep();
    expect(swept.outcomes).toBeGreaterThanOrEqual(1);
    const cleared = await until('the mismatch to clear', async () => {
      const d = await mismatches(b.id);
      return d.length === 1 && d[0]!.status === 'CLEARED' ? d[0] : null;
    });
    expect(cleared.conditionPresent).toBe(false);
    const row = await prisma.labComparison.findFirstOrThrow({ where: { batchId: b.id } });
    expect(row.predictionVersion).toBe(2);
    expect(row.verdict).toBe('inside');
  });
});
