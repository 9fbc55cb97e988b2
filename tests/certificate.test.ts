/**
 * Certificate data (issue 4, item 7) through the real API and worker: three loads of one ADI product and heat,
 * two on one plant day (a lot) and one two days earlier. Their logs and load events are written to the
 * database, the worker recomputes them (process-window rules and the live prediction), labs post results
 * through the API, a quality user dispositions every deviation through the API (a concession with a permit
 * for the bath excursion planted in one load). GET /v1/batches/:id/certificate and GET /v1/lots/:lotKey/certificate
 * must then carry the heat and its chemistry revision, the spec version, the process actually run, the
 * prediction, the lab results against the criteria, and the deviations with their dispositions and signer –
 * the same bytes on every call. Readings and numbers are invented.
 */
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';

// Real API + worker + queues on a shared, loaded machine: give hooks and tests room.
vi.setConfig({ testTimeout: 180_000, hookTimeout: 180_000 });
import { Queue } from 'bullmq';
import { DRIFT_QUEUE, OUTCOME_QUEUE, RECOMPUTE_QUEUE, type RecomputeJob } from '@ausline/contracts';
import { MODEL_VERSION } from '@ausline/metallurgy';
import { startTestApi } from '../apps/api/test/support/test-api.js';
import { createApiKeyFor, createUserWithSession } from '../apps/api/test/support/principals.js';
import { startWorker, type RunningWorker } from '../apps/worker/src/start-worker.js';
import { WorkerLogger } from '../apps/worker/src/logger.js';
import { enqueueRecompute } from '../apps/worker/src/recompute/enqueue.js';
import { createBatch, seedPlant, type SeededPlant } from './fixtures/austempering-plant.js';
import { TEST_REDIS_URL, deleteRedisKeys } from './support/redis.js';

const { api, db, config } = await startTestApi('certificate');
const prisma = db.prisma;
let worker: RunningWorker;
const queues: Queue[] = [];

beforeAll(async () => {
  worker = await startWorker(config, { metricsPort: null, aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') });
  for (const name of [RECOMPUTE_QUEUE, OUTCOME_QUEUE, DRIFT_QUEUE]) queues.push(new Queue(name, { connection: { url: TEST_REDIS_URL }, prefix: config.QUEUE_PREFIX }));
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
async function idle(): Promise<boolean> {
  for (const q of queues) {
    const c = await q.getJobCounts('active', 'waiting', 'delayed', 'prioritized');
    if (c.active + c.waiting + c.delayed + c.prioritized > 0) return false;
  }
  return true;
}
async function call(method: string, path: string, headers: Record<string, string>, body?: unknown) {
  const res = await fetch(`${api.url}${path}`, { method, headers: { 'content-type': 'application/json', ...headers }, body: body === undefined ? undefined : JSON.stringify(body) });
  const text = await res.text();
  return { status: res.status, text, body: JSON.parse(text) as any };
}

const MIN = 60_000;
const wiggle = (i: number, phase: number) => 0.3 * Math.sin(i * 0.7 + phase);

/** A finished load: 90 min at 900 °C (after a 20 min ramp), 12 s transfer, 90 min at 370 °C; optionally tc1 at 386 °C for 4 min. */
async function runLoad(plant: SeededPlant, code: string, intoBath: number, excursion: boolean) {
  const batch = await createBatch(prisma, plant, code);
  const outOfFurnace = intoBath - 12_000;
  const charged = outOfFurnace - 90 * MIN;
  const outOfBath = intoBath + 90 * MIN;
  await prisma.loadEvent.createMany({
    data: [
      { batchId: batch.id, kind: 'CHARGED', at: new Date(charged), equipmentId: plant.furnaceId },
      { batchId: batch.id, kind: 'OUT_OF_FURNACE', at: new Date(outOfFurnace), equipmentId: plant.furnaceId },
      { batchId: batch.id, kind: 'INTO_BATH', at: new Date(intoBath), equipmentId: plant.bathId },
      { batchId: batch.id, kind: 'OUT_OF_BATH', at: new Date(outOfBath), equipmentId: plant.bathId },
    ],
  });
  const samples: { channelId: string; t: Date; value: number }[] = [];
  plant.zoneIds.forEach((channelId, z) => {
    for (let t = charged, i = 0; t <= outOfFurnace; t += 10_000, i++) {
      const since = t - charged;
      samples.push({ channelId, t: new Date(t), value: (since < 20 * MIN ? 700 + (200 * since) / (20 * MIN) : 900) + wiggle(i, z) });
    }
  });
  plant.tcIds.forEach((channelId, k) => {
    for (let t = intoBath, i = 0; t <= outOfBath; t += 10_000, i++) {
      const hot = excursion && k === 0 && t >= intoBath + 30 * MIN && t < intoBath + 34 * MIN;
      samples.push({ channelId, t: new Date(t), value: hot ? 386 : 370 + wiggle(i, 2 + k) });
    }
  });
  await prisma.sample.createMany({ data: samples });
  return batch;
}

describe('certificate data per batch and per lot', () => {
  let plant: SeededPlant;
  let quality: { id: string; email: string; headers: Record<string, string> };
  let a: { id: string }, b: { id: string }, c: { id: string };

  beforeAll(async () => {
    plant = await seedPlant(prisma);
    quality = await createUserWithSession(api.app, { roles: ['QUALITY'], displayName: 'Q. Inspector' });
    const lab = await createApiKeyFor(api.app, { scope: 'LAB' });
    // 12 November 2025 is CET (UTC+1): 07:00Z and 10:00Z are 08:00 and 11:00 in Berlin, one plant day; CERT-C two days earlier.
    a = await runLoad(plant, 'CERT-A', Date.parse('2025-11-12T07:00:00Z'), false);
    b = await runLoad(plant, 'CERT-B', Date.parse('2025-11-12T10:00:00Z'), true);
    c = await runLoad(plant, 'CERT-C', Date.parse('2025-11-10T10:00:00Z'), false);
    const recompute = new Queue<RecomputeJob>(RECOMPUTE_QUEUE, { connection: { url: TEST_REDIS_URL }, prefix: config.QUEUE_PREFIX });
    for (const batch of [a, b, c]) await enqueueRecompute(recompute, batch.id, 'manual');
    await recompute.close();
    await until('the excursion deviation of CERT-B', () => prisma.deviation.findFirst({ where: { batchId: b.id, rule: 'bath-band-excursion' } }));
    for (const [batch, readings] of [[a, [392, 398, 401]], [b, [388, 395, 399]]] as const) {
      const hard = await call('POST', `/v1/batches/${batch.id}/lab-results`, lab.headers, { kind: 'HARDNESS', scale: 'HBW', testStandard: 'ISO 6506-1', readings, externalRef: `HB-${batch.id.slice(0, 6)}`, location: 'surface, mid-length' });
      expect(hard.status).toBe(201);
    }
    const tensile = await call('POST', `/v1/batches/${a.id}/lab-results`, lab.headers, { kind: 'TENSILE', testStandard: 'ISO 6892-1', rmMPa: 1110, rp02MPa: 790, elongationPct: 8, externalRef: 'T-A1' });
    expect(tensile.status).toBe(201);
    await until('every recompute, outcome and drift job', async () => (await idle()) && (await prisma.batchOutcome.count()) >= 3);
    await until('queues idle', idle);

    // Every deviation of the lot is dispositioned through the API: the bath excursion under a customer
    // concession, anything else the recompute or the lab comparison raised as use-as-is.
    for (const batch of [a, b]) {
      const list = await call('GET', `/v1/deviations?batchId=${batch.id}&limit=100`, quality.headers);
      for (const d of list.body.items as { id: string; rule: string; status: string }[]) {
        if (d.status !== 'OPEN' && d.status !== 'ACKNOWLEDGED') continue;
        const body = d.rule === 'bath-band-excursion'
          ? { disposition: 'CONCESSION', reason: 'customer accepts the 4 min excursion to 386 °C', dispositionRef: 'CP-2025-0311' }
          : { disposition: 'USE_AS_IS', reason: 'reviewed by metallurgy; product meets the drawing' };
        const res = await call('POST', `/v1/deviations/${d.id}/disposition`, quality.headers, body);
        expect(res.status).toBe(200);
      }
    }
  });

  it('a batch certificate: heat, spec version, process actually run, prediction, lab results, dispositions and signer', async () => {
    const res = await call('GET', `/v1/batches/${b.id}/certificate`, quality.headers);
    expect(res.status).toBe(200);
    const cert = res.body;
    expect(cert.schema).toBe('ausline.certificate/v1');
    expect(cert.kind).toBe('batch');
    const heat = await prisma.heat.findUniqueOrThrow({ where: { id: plant.heatId } });
    const spec = await prisma.productSpec.findUniqueOrThrow({ where: { id: plant.specId } });
    expect(cert.lot.lotKey).toBe(`${spec.code}:${heat.heatNumber}:2025-11-12`);
    expect(cert.heat).toMatchObject({ heatNumber: heat.heatNumber, revision: 1, chemistryWtPct: heat.chemistryWtPct, grade: 'EN-GJS-1050-6' });
    expect(cert.heat.chemistryCheck).toEqual([{ element: 'C', valueWtPct: 3.6, minWtPct: 3.4, maxWtPct: 3.8, verdict: 'ok' }]);
    expect(cert.specVersions).toHaveLength(1);
    expect(cert.specVersions[0]).toMatchObject({ version: 1, status: 'APPROVED', acceptanceCriteria: { hardness: { scale: 'HBW', min: 341, max: 444 } } });
    const batch = cert.batches[0];
    expect(batch.code).toBe('CERT-B');
    expect(batch.complete).toBe(true);
    // The process as logged: soak from the moment both zones passed 890 °C (19 min into the 20 min ramp) to
    // the furnace door, 12 s transfer, 90 min hold with tc1 at 386 °C for 4 of them.
    expect(batch.process.austenitize.over).toBe('soak');
    expect(batch.process.austenitize.soakMin).toBeCloseTo(71, 0);
    expect(batch.process.austenitize.tempC.meanC).toBeGreaterThan(899);
    expect(batch.process.transfer).toEqual({ seconds: 12, maxS: 20, withinLimit: true });
    expect(batch.process.bath.holdMin).toBe(90);
    expect(batch.process.bath.tempC.maxC).toBe(386);
    expect(batch.process.bath.tempC.minC).toBeGreaterThan(369);
    expect(batch.process.bath.tempC.meanC).toBeGreaterThan(370);
    expect(batch.process.bath.tempC.meanC).toBeLessThan(370.5);
    expect(batch.equipment.bath.id).toBe(plant.bathId);
    // Lab results against the criteria: HBW 388–399 within 341–444.
    expect(batch.labResults).toHaveLength(1);
    expect(batch.acceptance).toEqual([
      expect.objectContaining({ criterion: 'hardness', requirement: 'HBW 341–444', verdict: 'pass', measured: expect.objectContaining({ readings: 3, min: 388, max: 399 }) }),
    ]);
    // The excursion with its disposition: concession, permit, signer and who signed.
    const excursion = batch.deviations.find((d: { rule: string }) => d.rule === 'bath-band-excursion');
    expect(excursion).toMatchObject({
      severity: 'MAJOR',
      status: 'DISPOSITIONED',
      disposition: { disposition: 'CONCESSION', permit: 'CP-2025-0311', signer: 'Q. Inspector', signedBy: { email: quality.email, displayName: 'Q. Inspector' } },
    });
    expect(excursion.audit.map((x: { action: string }) => x.action)).toEqual(['OPEN', 'DISPOSITION']);
    expect(batch.release.status).not.toBe('pending-disposition');
    expect(batch.release.concessions).toEqual(['CP-2025-0311']);
    expect(cert.recordDigest).toMatch(/^[0-9a-f]{64}$/);
    // The prediction block is the batch's latest stored prediction: its identity, model version, verdicts and bands.
    const stored = await prisma.prediction.findFirstOrThrow({ where: { batchId: b.id }, orderBy: { version: 'desc' } });
    const storedResult = stored.result as { bands: Record<string, unknown>; properties: Record<string, unknown>; verdicts: { criterion: string; verdict: string; p05: number; p50: number; p95: number }[]; overall: string; hold: unknown };
    expect(stored.phase).toBe('DONE');
    expect(batch.prediction).toMatchObject({
      id: stored.id,
      version: stored.version,
      modelVersion: MODEL_VERSION,
      phase: 'DONE',
      inputDigest: stored.inputDigest,
      watermark: stored.watermark!.toISOString(),
      overall: storedResult.overall,
      verdicts: storedResult.verdicts,
      hold: storedResult.hold,
      adiGrade: storedResult.properties.adiGrade ?? null,
      labCalibration: null, // two hardness results of this product so far: below the minimum of 3, no calibration in force
    });
    expect(stored.modelVersion).toBe(MODEL_VERSION);
    for (const q of ['hardnessHV', 'hardnessHBW', 'hardnessHRC', 'tensileMPa', 'fractionAtEnd', 'bainiticFerrite', 'blockyAustenite', 'filmAustenite', 'retainedAusteniteFraction', 'freshMartensite', 'upperProductsFraction']) {
      expect(batch.prediction.bands[q]).toEqual(storedResult.bands[q]);
    }
    const hv = batch.prediction.bands.hardnessHV as { p05: number; p50: number; p95: number };
    expect(hv.p05).toBeLessThanOrEqual(hv.p50);
    expect(hv.p50).toBeLessThanOrEqual(hv.p95);
    // The spec's HBW criterion was judged on that very band: its HBW band is the certificate's (both the ASTM E140
    // conversion of the HV percentiles; null where a percentile lies off the table) and its message quotes the HV band.
    const hardnessVerdict = batch.prediction.verdicts.find((v: { criterion: string }) => v.criterion === 'hardness');
    const hbw = batch.prediction.bands.hardnessHBW as { p05: number | null; p50: number | null; p95: number | null };
    expect(hardnessVerdict).toMatchObject({ p05: hbw.p05, p50: hbw.p50, p95: hbw.p95, unit: 'HBW' });
    expect(hardnessVerdict.message).toContain(`(${hv.p05}–${hv.p95} HV, ASTM E140)`);
    console.log(
      `certificate of CERT-B: bath ${batch.process.bath.tempC.minC}–${batch.process.bath.tempC.maxC} °C (mean ${batch.process.bath.tempC.meanC}), hold ${batch.process.bath.holdMin} min, ` +
        `austenitize ${batch.process.austenitize.tempC.meanC} °C for ${batch.process.austenitize.soakMin} min, transfer ${batch.process.transfer.seconds} s; ` +
        `prediction ${batch.prediction ? `v${batch.prediction.version} (${batch.prediction.modelVersion}), overall ${batch.prediction.overall}` : 'none'}; ` +
        `release ${batch.release.status}; ${batch.deviations.length} deviation(s): ${batch.deviations.map((d: any) => `${d.rule} ${d.disposition?.disposition ?? d.status} by ${d.disposition?.signer ?? '-'}`).join('; ')}`,
    );
  });

  it('a lot certificate: the two loads of that day, not the one before; deterministic to the byte', async () => {
    const one = await call('GET', `/v1/batches/${a.id}/certificate`, quality.headers);
    const lotKey = one.body.lot.lotKey as string;
    const first = await call('GET', `/v1/lots/${encodeURIComponent(lotKey)}/certificate`, quality.headers);
    expect(first.status).toBe(200);
    const lot = first.body;
    expect(lot.kind).toBe('lot');
    expect(lot.batches.map((x: { code: string }) => x.code)).toEqual(['CERT-A', 'CERT-B']);
    expect(lot.summary).toMatchObject({ batches: 2, partCount: 96, weightKg: 840, concessions: ['CP-2025-0311'] });
    expect(lot.summary.hardness).toMatchObject({ scale: 'HBW', readings: 6, min: 388, max: 401 });
    expect(['conforming-under-concession', 'accepted-use-as-is']).toContain(lot.summary.release);
    const tensile = lot.batches[0].acceptance.find((x: { criterion: string }) => x.criterion === 'tensile');
    expect(tensile).toBeUndefined(); // the fixture spec names no tensile criterion; the result is still listed
    expect(lot.batches[0].labResults.map((l: { kind: string }) => l.kind).sort()).toEqual(['HARDNESS', 'TENSILE']);
    const again = await call('GET', `/v1/lots/${encodeURIComponent(lotKey)}/certificate`, quality.headers);
    expect(again.text).toBe(first.text);
    expect(lot.recordDigest).toBe(again.body.recordDigest);
    const other = await call('GET', `/v1/batches/${c.id}/certificate`, quality.headers);
    expect(other.body.lot.lotKey).toMatch(/:2025-11-10$/);
    console.log(`lot ${lotKey}: ${lot.summary.batches} loads, ${lot.summary.partCount} parts, release ${lot.summary.release}, digest ${lot.recordDigest.slice(0, 16)}…`);
  });

  it('a malformed lot key is a 400 naming it; an unknown one a 404', async () => {
    const bad = await call('GET', `/v1/lots/${encodeURIComponent('only:two')}/certificate`, quality.headers);
    expect(bad.status).toBe(400);
    expect(bad.body.issues[0].path).toBe('params.lotKey');
    const unknown = await call('GET', `/v1/lots/${encodeURIComponent('NO-SUCH-SPEC:H1:2025-11-12')}/certificate`, quality.headers);
    expect(unknown.status).toBe(404);
    const spec = await prisma.productSpec.findUniqueOrThrow({ where: { id: plant.specId } });
    const heat = await prisma.heat.findUniqueOrThrow({ where: { id: plant.heatId } });
    const empty = await call('GET', `/v1/lots/${encodeURIComponent(`${spec.code}:${heat.heatNumber}:2025-11-11`)}/certificate`, quality.headers);
    expect(empty.status).toBe(404);
    expect((await call('GET', `/v1/batches/${plant.lineId}/certificate`, quality.headers)).status).toBe(404);
  });
});
