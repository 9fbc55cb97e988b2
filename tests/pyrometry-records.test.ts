/**
 * Pyrometry records through the API: equipment records with customer overlays, sensors and instruments
 * (retry-safe, placement checks), certificates judged against the accuracy limits (a failing one looks
 * back as suspect product), a survey passed late (its lateness found and looked back over), sensor use and
 * expiry limits at the start of a batch (worker recompute), the due list with the test kit, and the
 * reference data with its provenance flags.
 *
 * Reference values checked here, as summarised in /work/shared/docs/practice.md §1.1 (AMS 2750):
 *  - control sensors ±2.2 °C or 0.75 % of reading, whichever is greater; test sensors ±1.1 °C or 0.4 %
 *    (AMS 2750E Table 1 as summarised by PRI [S6]);
 *  - TUS interval class 2 type B monthly [S10]; monthly = same date next month (AMS 2750E §2.2.25 via [S8]);
 *  - nonexpendable base-metal sensor replacement 650–980 °C: quarterly or 180 uses (AMS 2750G Table 6 via [S11]);
 *  - uniformity class 2 ±6.0 °C [S2, S70]; SAT class 5 ±2.8 °C from memory [M].
 * All serials, readings and dates are invented.
 */
import { randomBytes, randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, localDateOf } from '@ausline/compliance';
import type { PrismaClient } from '@ausline/db';
import { createApiKeyFor } from '../apps/api/test/support/principals.js';
import { startWorker, type RunningWorker } from '../apps/worker/src/start-worker.js';
import { WorkerLogger } from '../apps/worker/src/logger.js';
import { RecomputeService } from '../apps/worker/src/recompute/recompute.service.js';
import { createBatch, seedPlant, type SeededPlant } from './fixtures/austempering-plant.js';
import { startIngestWorld, type Reply } from './ingest-fixtures.js';
import { deleteRedisKeys } from './support/redis.js';

const world = await startIngestWorld('pyrometry-records');
const { http, admin, quality, metallurgist } = world;
const prisma: PrismaClient = world.db.prisma;

let worker: RunningWorker;
beforeAll(async () => {
  worker = await startWorker(world.config, { metricsPort: 0, metricsHost: '127.0.0.1', aliveFile: null, reconcile: false, logger: new WorkerLogger('silent') });
});
afterAll(async () => {
  await worker?.close();
  await deleteRedisKeys(world.config.QUEUE_PREFIX);
});

const MIN = 60_000;
const H = 60 * MIN;
const D = 24 * H;
const NOW = Date.now();
const iso = (ms: number) => new Date(ms).toISOString();
const tag = () => randomBytes(3).toString('hex').toUpperCase();
const AMS2750G = { standard: 'AMS2750', revision: 'G' };

function ok<T = any>(reply: Reply<T>, status: number): T {
  if (reply.status !== status) throw new Error(`expected ${status}, got ${reply.status}: ${JSON.stringify(reply.body)}`);
  return reply.body;
}

async function put(path: string, body: unknown, headers: Record<string, string> = admin.headers): Promise<Reply> {
  const res = await fetch(`${world.api.url}${path}`, { method: 'PUT', headers: { 'content-type': 'application/json', ...headers }, body: JSON.stringify(body) });
  return { status: res.status, body: await res.json(), headers: res.headers };
}

const record = (over: Record<string, unknown> = {}) => ({ furnaceClass: 2, instrumentationType: 'B', standard: 'AMS2750', revision: 'G', tusRequired: true, ...over });

// The test kit of this file.
const satSensor = `K${tag()}-SAT`;
const tusSensors = [1, 2, 3].map((i) => `K${tag()}-TUS${i}`);
beforeAll(async () => {
  for (const [serial, use] of [[satSensor, 'sat-test'], ...tusSensors.map((s) => [s, 'tus-test'])] as const) {
    ok(
      await http.post(
        '/v1/pyrometry/sensors',
        {
          serial,
          use,
          thermocoupleType: 'K',
          installedAt: iso(NOW - 400 * D),
          calibration: { certificateRef: `${serial}/1`, calibratedAt: iso(NOW - 80 * D), points: [{ atC: 300, correctionC: 0 }, { atC: 1000, correctionC: 0 }], reference: AMS2750G },
        },
        admin.headers,
      ),
      201,
    );
  }
});

function survey(setpointC: number, endMs: number, value: number) {
  const locations = tusSensors.map((testSensor, i) => ({ locationId: `L${i + 1}`, testSensor }));
  const readings = [];
  for (let k = 0; k <= 15; k++) for (let i = 0; i < 3; i++) readings.push({ locationId: `L${i + 1}`, at: iso(endMs - (15 - k) * 2 * MIN), readingC: value });
  return { setpointC, locations, readings };
}

async function sensorOn(plant: SeededPlant, channelId: string, over: Record<string, unknown>, points = [{ atC: 300, correctionC: 0.5 }, { atC: 1000, correctionC: 0.5 }]) {
  const serial = `S${tag()}`;
  const body = ok(
    await http.post(
      '/v1/pyrometry/sensors',
      { serial, equipmentId: channelId === plant.tcIds[0] || channelId === plant.tcIds[1] ? plant.bathId : plant.furnaceId, channelId, use: 'control', thermocoupleType: 'K', installedAt: iso(NOW - 30 * D), calibration: { certificateRef: `${serial}/1`, calibratedAt: iso(NOW - 30 * D), points }, ...over },
      admin.headers,
    ),
    201,
  );
  return body.sensor as { id: string; serial: string };
}

/** A load through the bath (or only the furnace), seeded as the controllers would have posted it. */
async function loadOn(plant: SeededPlant, where: 'bath' | 'furnace', startMs: number, endMs: number | null) {
  const batch = await createBatch(prisma, plant);
  const equipmentId = where === 'bath' ? plant.bathId : plant.furnaceId;
  await prisma.loadEvent.create({ data: { batchId: batch.id, kind: where === 'bath' ? 'INTO_BATH' : 'CHARGED', at: new Date(startMs), equipmentId } });
  if (endMs !== null) await prisma.loadEvent.create({ data: { batchId: batch.id, kind: where === 'bath' ? 'OUT_OF_BATH' : 'OUT_OF_FURNACE', at: new Date(endMs), equipmentId } });
  return batch.id;
}

describe('equipment records', () => {
  it('PUT creates, answers unchanged on retry, updates, and refuses a looser customer overlay without storing anything', async () => {
    const id = world.plant.furnaceId;
    const created = ok(await put(`/v1/equipment/${id}/pyrometry`, record()), 201);
    expect(created).toMatchObject({ outcome: 'created', record: { furnaceClass: 2, limitUnit: 'C' }, reference: { id: 'AMS2750G', standard: 'AMS2750', revision: 'G' } });
    expect(created.reference.unconfirmedValues).toBeGreaterThan(0);
    expect(ok(await put(`/v1/equipment/${id}/pyrometry`, record()), 200).outcome).toBe('unchanged');
    // "Some primes accept ±5.0 °C" for class 2 (practice.md §1.1 [S2]): a stricter overlay is taken.
    const overlay = { source: 'Prime spec P-1 rev A (invented)', entries: [{ item: 'uniformityTolerance', furnaceClass: 2, value: { plusMinusC: 5 } }] };
    const updated = ok(await put(`/v1/equipment/${id}/pyrometry`, record({ customerOverlay: overlay })), 200);
    expect(updated).toMatchObject({ outcome: 'updated', reference: { id: 'AMS2750G+overlay(Prime spec P-1 rev A (invented))', overlays: ['Prime spec P-1 rev A (invented)'] } });

    const looser = await put(`/v1/equipment/${id}/pyrometry`, record({ furnaceClass: 3, customerOverlay: { source: 'X', entries: [{ item: 'uniformityTolerance', furnaceClass: 2, value: { plusMinusC: 7 } }] } }));
    expect(looser.status).toBe(400);
    expect(looser.body.issues[0]).toMatchObject({ path: 'customerOverlay.entries.0.value' });
    expect(looser.body.issues[0].message).toMatch(/looser than AMS2750G uniformityTolerance class 2/);
    expect(await prisma.equipmentRecord.findUniqueOrThrow({ where: { equipmentId: id } })).toMatchObject({ furnaceClass: 2 });

    const badRevision = await put(`/v1/equipment/${id}/pyrometry`, record({ revision: 'Z' }));
    expect(badRevision.status).toBe(400);
    expect(badRevision.body.issues).toContainEqual(expect.objectContaining({ path: 'revision' }));
    expect((await put(`/v1/equipment/${id}/pyrometry`, record({ furnaceClass: 7 }))).body.issues).toContainEqual(expect.objectContaining({ path: 'furnaceClass' }));
    expect((await put(`/v1/equipment/${randomUUID()}/pyrometry`, record())).status).toBe(404);
    expect((await put(`/v1/equipment/${id}/pyrometry`, record(), quality.headers)).status).toBe(403);

    const notEnrolled = ok(await http.get(`/v1/equipment/${world.plant.bathId}/pyrometry`, metallurgist.headers), 200);
    expect(notEnrolled).toMatchObject({ enrolled: false });
  });
});

describe('sensors and instruments', () => {
  it('are retry-safe by serial and placed only on a free temperature channel of their equipment', async () => {
    const plant = world.plant;
    const body = { serial: `T${tag()}`, equipmentId: plant.bathId, channelId: plant.tcIds[1], use: 'recording', thermocoupleType: 'K', installedAt: iso(NOW - 50 * D) };
    const first = ok(await http.post('/v1/pyrometry/sensors', body, admin.headers), 201);
    expect(ok(await http.post('/v1/pyrometry/sensors', body, admin.headers), 200)).toMatchObject({ outcome: 'unchanged', sensor: { id: first.sensor.id } });
    const differing = await http.post('/v1/pyrometry/sensors', { ...body, thermocoupleType: 'N' }, admin.headers);
    expect(differing.status).toBe(409);
    expect(differing.body.issues).toEqual([{ path: 'thermocoupleType', message: 'stored "K", sent "N"' }]);

    const serving = await http.post('/v1/pyrometry/sensors', { ...body, serial: `T${tag()}` }, admin.headers);
    expect(serving.status).toBe(409);
    expect(serving.body.message).toMatch(/already served by sensor/);
    const wrongEquipment = await http.post('/v1/pyrometry/sensors', { ...body, serial: `T${tag()}`, equipmentId: plant.furnaceId }, admin.headers);
    expect(wrongEquipment.status).toBe(422);
    expect(wrongEquipment.body.issues).toEqual([{ path: 'channelId', message: 'not on this equipment' }]);
    const testOnChannel = await http.post('/v1/pyrometry/sensors', { ...body, serial: `T${tag()}`, use: 'tus-test' }, admin.headers);
    expect(testOnChannel.status).toBe(422);
    const agitator = await prisma.channel.findFirstOrThrow({ where: { equipmentId: plant.bathId, code: 'agitator' } });
    expect((await http.post('/v1/pyrometry/sensors', { ...body, serial: `T${tag()}`, channelId: agitator.id }, admin.headers)).body.issues).toEqual([
      { path: 'channelId', message: 'not a temperature channel' },
    ]);

    // Retiring frees the channel for the replacement.
    const retiredAt = iso(NOW - 5 * D);
    expect(ok(await http.post(`/v1/pyrometry/sensors/${first.sensor.id}/retire`, { retiredAt }, admin.headers), 200)).toMatchObject({ outcome: 'updated' });
    expect(ok(await http.post(`/v1/pyrometry/sensors/${first.sensor.id}/retire`, { retiredAt }, admin.headers), 200)).toMatchObject({ outcome: 'unchanged' });
    expect((await http.post(`/v1/pyrometry/sensors/${first.sensor.id}/retire`, { retiredAt: iso(NOW - 4 * D) }, admin.headers)).status).toBe(409);
    ok(await http.post('/v1/pyrometry/sensors', { ...body, serial: `T${tag()}`, installedAt: iso(NOW - 5 * D) }, admin.headers), 201);

    // A field test instrument of the kit needs a standard to judge its certificate against.
    const instrument = { serial: `FTI${tag()}`, use: 'field-test', installedAt: iso(NOW - 100 * D), calibration: { certificateRef: 'C1', calibratedAt: iso(NOW - 10 * D), points: [{ atC: 900, correctionC: 0.3 }] } };
    const noStandard = await http.post('/v1/pyrometry/instruments', instrument, admin.headers);
    expect(noStandard.status).toBe(400);
    expect(noStandard.body.issues).toEqual([{ path: 'calibration.reference', message: 'required for a subject without an enrolled equipment' }]);
    const fti = ok(await http.post('/v1/pyrometry/instruments', { ...instrument, calibration: { ...instrument.calibration, reference: AMS2750G } }, admin.headers), 201);
    // Field test instruments ±0.6 °C or 0.1 % of reading [M]: at 900 °C the band is 0.9 °C; +0.3 passes.
    expect(fti.calibration.check).toMatchObject({ verdict: 'pass', points: [{ atC: 900, bandC: 0.9, passed: true }] });
    expect(fti.instrument).toMatchObject({ calibrationCertificateRef: 'C1', calibrationPoints: [{ atC: 900, correctionC: 0.3 }] });
  });
});

describe('a failed calibration looks back', () => {
  it('a control sensor certificate outside ±2.2 °C / 0.75 % fails and puts the loads since the last good certificate under suspect product', async () => {
    const plant = await seedPlant(prisma);
    ok(await put(`/v1/equipment/${plant.bathId}/pyrometry`, record()), 201);
    const sensor = await sensorOn(plant, plant.tcIds[0], { installedAt: iso(NOW - 90 * D), calibration: { certificateRef: 'GOOD', calibratedAt: iso(NOW - 60 * D), points: [{ atC: 300, correctionC: 1.0 }, { atC: 400, correctionC: 1.0 }] } });
    const before = await loadOn(plant, 'bath', NOW - 61 * D, NOW - 61 * D + H);
    const inWindow = [await loadOn(plant, 'bath', NOW - 40 * D, NOW - 40 * D + H), await loadOn(plant, 'bath', NOW - 20 * D, NOW - 20 * D + H)];

    // At 300 °C the band is max(2.2, 0.75 % × 300 = 2.25) = 2.25 °C: +3.0 fails, +2.0 at 400 °C passes.
    const failed = ok(
      await http.post(`/v1/pyrometry/sensors/${sensor.id}/calibrations`, { certificateRef: 'BAD', calibratedAt: iso(NOW - 10 * D), points: [{ atC: 300, correctionC: 3.0 }, { atC: 400, correctionC: 2.0 }] }, admin.headers),
      201,
    );
    expect(failed.check).toMatchObject({ verdict: 'fail', passed: false, points: [{ atC: 300, bandC: 2.25, passed: false }, { atC: 400, bandC: 3, passed: true }] });
    expect(failed.calibration).toMatchObject({ passed: false, referenceId: 'AMS2750G' });
    expect(failed.suspect.window).toEqual({ afterExclusive: iso(NOW - 60 * D), untilInclusive: iso(NOW - 10 * D) });
    expect(failed.suspect.batches.map((b: { batchId: string }) => b.batchId)).toEqual(inWindow);
    const deviations = await prisma.deviation.findMany({ where: { rule: 'suspect-product', lineId: plant.lineId } });
    expect(deviations.map((d) => d.batchId).sort()).toEqual([...inWindow].sort());
    expect(deviations.map((d) => (d.details as { itemKind: string }).itemKind)).toEqual(['sensor-calibration', 'sensor-calibration']);
    expect(deviations.some((d) => d.batchId === before)).toBe(false);

    // Re-posting the same certificate is a no-op; different points under the same reference are refused.
    expect(
      ok(await http.post(`/v1/pyrometry/sensors/${sensor.id}/calibrations`, { certificateRef: 'BAD', calibratedAt: iso(NOW - 10 * D), points: [{ atC: 300, correctionC: 3.0 }, { atC: 400, correctionC: 2.0 }] }, admin.headers), 200),
    ).toMatchObject({ outcome: 'unchanged' });
    expect((await http.post(`/v1/pyrometry/sensors/${sensor.id}/calibrations`, { certificateRef: 'BAD', calibratedAt: iso(NOW - 10 * D), points: [{ atC: 300, correctionC: 1 }] }, admin.headers)).status).toBe(409);
    expect(await prisma.deviation.count({ where: { rule: 'suspect-product', lineId: plant.lineId } })).toBe(2);
  });
  it('with no good certificate on record, every load on the equipment up to the failure is suspect', async () => {
    const plant = await seedPlant(prisma);
    ok(await put(`/v1/equipment/${plant.bathId}/pyrometry`, record()), 201);
    const loads = [await loadOn(plant, 'bath', NOW - 30 * D, NOW - 30 * D + H), await loadOn(plant, 'bath', NOW - 3 * D, null)];
    const later = await loadOn(plant, 'bath', NOW - 1 * D, NOW - 1 * D + H);
    const first = ok(
      await http.post(
        '/v1/pyrometry/sensors',
        {
          serial: `S${tag()}`,
          equipmentId: plant.bathId,
          channelId: plant.tcIds[0],
          use: 'control',
          thermocoupleType: 'K',
          installedAt: iso(NOW - 40 * D),
          calibration: { certificateRef: 'FIRST', calibratedAt: iso(NOW - 2 * D), points: [{ atC: 300, correctionC: -2.5 }] },
        },
        admin.headers,
      ),
      201,
    );
    expect(first.calibration.check.verdict).toBe('fail');
    expect(first.calibration.suspect.window).toEqual({ afterExclusive: null, untilInclusive: iso(NOW - 2 * D) });
    // The load still in the bath (no OUT_OF_BATH yet) is in process at the failure: suspect too.
    expect(first.calibration.suspect.batches.map((b: { batchId: string }) => b.batchId)).toEqual(loads);
    expect(await prisma.deviation.count({ where: { rule: 'suspect-product', batchId: later } })).toBe(0);
  });
});

describe('a survey passed late', () => {
  it('finds the lateness and looks back over the loads up to the end of the due date', async () => {
    const plant = await seedPlant(prisma);
    ok(await put(`/v1/equipment/${plant.bathId}/pyrometry`, record()), 201);
    const lastPass = NOW - 70 * D;
    ok(await http.post(`/v1/equipment/${plant.bathId}/uniformity-surveys`, survey(370, lastPass, 371), quality.headers), 201);
    const x = await loadOn(plant, 'bath', NOW - 65 * D, NOW - 65 * D + H);
    const y = await loadOn(plant, 'bath', NOW - 45 * D, NOW - 45 * D + H);
    const z = await loadOn(plant, 'bath', NOW - 20 * D, NOW - 20 * D + H);

    // Class 2 type B: monthly [S10], same date next month [S8]; Europe/Berlin is the plant's zone.
    ok(await http.post(`/v1/equipment/${plant.bathId}/uniformity-surveys`, survey(370, NOW - H, 372), quality.headers), 201);
    const triggers = ok(await http.get(`/v1/equipment/${plant.bathId}/suspect-triggers`, metallurgist.headers), 200);
    expect(triggers).toHaveLength(1);
    const trigger = triggers[0];
    expect(trigger).toMatchObject({ kind: 'found-overdue', itemKind: 'tus', lastPassAt: iso(lastPass), sourceId: null });
    const lastPassDate = localDateOf(new Date(lastPass), 'Europe/Berlin');
    const [y0, m0, d0] = lastPassDate.split('-').map(Number) as [number, number, number];
    const dueDate = new Date(Date.UTC(y0, m0, Math.min(d0, new Date(Date.UTC(y0, m0 + 1, 0)).getUTCDate()))).toISOString().slice(0, 10);
    expect(trigger.evidence.dueDate).toBe(dueDate);
    // The look-back closes at the last instant of the due date, plant time.
    expect(localDateOf(new Date(trigger.at), 'Europe/Berlin')).toBe(dueDate);
    expect(localDateOf(new Date(new Date(trigger.at).getTime() + 1), 'Europe/Berlin')).toBe(addDays(dueDate, 1));
    expect(trigger.deviations.map((d: { batchId: string }) => d.batchId).sort()).toEqual([x, y].sort());
    expect(trigger.deviations.some((d: { batchId: string }) => d.batchId === z)).toBe(false);

    // Sweeping again finds the same condition and opens nothing new.
    const swept = ok(await http.post('/v1/pyrometry/overdue-sweep', { equipmentId: plant.bathId }, quality.headers), 200);
    expect(swept.raised).toEqual([]);
    const all = ok(await http.post('/v1/pyrometry/overdue-sweep', {}, quality.headers), 200);
    expect(all.raised.filter((r: { created: boolean; equipmentId: string }) => r.equipmentId === plant.bathId && r.created)).toEqual([]);
    expect(await prisma.deviation.count({ where: { rule: 'suspect-product', lineId: plant.lineId } })).toBe(2);
  });
});

describe('sensor limits at the start of a batch', () => {
  it('raises sensor-use-limit for a sensor with its 180 uses spent and sensor-expired for one past its expiry date', async () => {
    const plant = await seedPlant(prisma);
    ok(
      await put(
        `/v1/equipment/${plant.furnaceId}/pyrometry`,
        record({
          furnaceClass: 5,
          customerOverlay: {
            source: 'Customer spec HT-9 (invented)',
            entries: [
              { item: 'satInterval', furnaceClass: 5, instrumentationType: 'B', value: { unit: 'month', count: 1 } },
              { item: 'sensorCalibrationInterval', sensorUse: 'control', metal: 'base-metal', value: { unit: 'month', count: 12 } },
            ],
          },
        }),
      ),
      201,
    );
    const yesterday = addDays(localDateOf(new Date(), 'Europe/Berlin'), -1);
    const spent = await sensorOn(plant, plant.zoneIds[0], { priorUses: 180, priorMaxTempC: 900 });
    const expired = await sensorOn(plant, plant.zoneIds[1], { expiresOn: yesterday });
    for (const s of [spent, expired]) {
      ok(
        await http.post(
          `/v1/equipment/${plant.furnaceId}/accuracy-tests`,
          { sensor: s.serial, testedAt: iso(NOW - 3 * D), setpointC: 900, instrumentReadingC: 900.5, testSensor: satSensor, testSensorReadingC: 900.0 },
          quality.headers,
        ),
        201,
      );
    }
    ok(await http.post(`/v1/equipment/${plant.furnaceId}/uniformity-surveys`, survey(900, NOW - 3 * D, 905), quality.headers), 201);

    const batchId = await loadOn(plant, 'furnace', Date.now() - MIN, null);
    await worker.app.get(RecomputeService).recompute(batchId);
    const deviations = await prisma.deviation.findMany({ where: { batchId, rule: { in: ['equipment-overdue', 'sensor-expired', 'sensor-use-limit', 'equipment-record-incomplete'] } }, orderBy: { rule: 'asc' } });
    expect(deviations.map((d) => [d.rule, d.severity])).toEqual([
      ['sensor-expired', 'MAJOR'],
      ['sensor-use-limit', 'MAJOR'],
    ]);
    const [exp, use] = deviations as [(typeof deviations)[0], (typeof deviations)[0]];
    expect((exp.details as any).findings).toEqual([expect.objectContaining({ kind: 'sensor-expired', subjectId: expired.id })]);
    expect((use.details as any).findings).toEqual([expect.objectContaining({ kind: 'sensor-use-limit', subjectId: spent.id })]);
    expect(use.message).toMatch(/has 180 of 180 uses \(hottest use 900 °C\); it may not be used again; this batch would be use 181 of 180/);

    // Both sensors replaced: the next batch is clean.
    const replacedAt = Date.now() - 30_000;
    for (const [old, channelId] of [[spent, plant.zoneIds[0]], [expired, plant.zoneIds[1]]] as const) {
      ok(await http.post(`/v1/pyrometry/sensors/${old.id}/retire`, { retiredAt: iso(replacedAt) }, admin.headers), 200);
      const fresh = await sensorOn(plant, channelId, { installedAt: iso(replacedAt), calibration: { certificateRef: `N${tag()}`, calibratedAt: iso(replacedAt - D), points: [{ atC: 800, correctionC: 0.2 }, { atC: 1000, correctionC: 0.2 }] } });
      ok(
        await http.post(
          `/v1/equipment/${plant.furnaceId}/accuracy-tests`,
          { sensor: fresh.id, testedAt: iso(replacedAt + 1000), setpointC: 900, instrumentReadingC: 900.5, testSensor: satSensor, testSensorReadingC: 900.0 },
          quality.headers,
        ),
        201,
      );
    }
    const next = await loadOn(plant, 'furnace', Date.now(), null);
    await worker.app.get(RecomputeService).recompute(next);
    expect(await prisma.deviation.count({ where: { batchId: next, rule: { in: ['equipment-overdue', 'sensor-expired', 'sensor-use-limit', 'equipment-record-incomplete'] } } })).toBe(0);
  });
});

describe('due list and reference data', () => {
  it('lists each enrolled furnace and bath with its items, and the test kit by the strictest reference in use', async () => {
    const plant = await seedPlant(prisma);
    ok(await put(`/v1/equipment/${plant.bathId}/pyrometry`, record()), 201);
    // A kit sensor calibrated 100 days ago: base-metal test thermocouples every 3 months ([S6]) -> overdue.
    const stale = `K${tag()}-OLD`;
    ok(
      await http.post(
        '/v1/pyrometry/sensors',
        {
          serial: stale,
          use: 'tus-test',
          thermocoupleType: 'K',
          installedAt: iso(NOW - 400 * D),
          calibration: { certificateRef: 'OLD', calibratedAt: iso(NOW - 100 * D), points: [{ atC: 300, correctionC: 0 }], reference: AMS2750G },
        },
        admin.headers,
      ),
      201,
    );
    const due = ok(await http.get(`/v1/lines/${plant.lineId}/pyrometry/due?dueSoonDays=14`, metallurgist.headers), 200);
    expect(due).toMatchObject({ lineId: plant.lineId, timeZone: 'Europe/Berlin', notEnrolled: [{ equipmentId: plant.furnaceId }] });
    expect(due.equipment).toHaveLength(1);
    // Nothing recorded yet: the survey has never passed.
    expect(due.equipment[0].items.find((i: { kind: string }) => i.kind === 'tus')).toMatchObject({ status: 'overdue', causes: ['never-passed'] });
    const staleId = (await prisma.sensor.findUniqueOrThrow({ where: { serial: stale } })).id;
    const kitItem = due.testKit.find((i: { kind: string; subjectId: string }) => i.kind === 'sensor-calibration' && i.subjectId === staleId);
    expect(kitItem).toMatchObject({ status: 'overdue', referenceIds: ['AMS2750G'], causes: ['past-due-date'] });
    // Kit sensors calibrated 80 days ago are due within 14 days.
    const satId = (await prisma.sensor.findUniqueOrThrow({ where: { serial: satSensor } })).id;
    expect(due.testKit.find((i: { kind: string; subjectId: string }) => i.kind === 'sensor-calibration' && i.subjectId === satId)).toMatchObject({ status: 'due-soon' });
    expect((await http.get(`/v1/lines/${randomUUID()}/pyrometry/due`, metallurgist.headers)).status).toBe(404);
  });

  it('serves the reference sets with every unconfirmed value flagged for the plant to check', async () => {
    const all = ok(await http.get('/v1/pyrometry/references', metallurgist.headers), 200);
    expect(all.map((r: { id: string }) => r.id)).toEqual(['AMS2750E', 'AMS2750F', 'AMS2750G', 'AMS2750H', 'CQI-9-3', 'CQI-9-4']);
    const g = ok(await http.get('/v1/pyrometry/references?standard=AMS2750&revision=G&unconfirmedOnly=true', metallurgist.headers), 200);
    expect(g).toHaveLength(1);
    expect(g[0].values.every((v: { confirmed: boolean }) => !v.confirmed)).toBe(true);
    expect(g[0].values).toContainEqual(expect.objectContaining({ path: 'satDifferenceLimit.byClass.5', value: { plusMinusC: 2.8, plusMinusF: 5, pctOfReading: null } }));
    expect(g[0].values.find((v: { path: string }) => v.path === 'satDifferenceLimit.byClass.5').note).toMatch(/from memory/);
    // Class 2 uniformity (±6.0 °C) is confirmed for G [S2, S70], so it is not in the unconfirmed list.
    expect(g[0].values.some((v: { path: string }) => v.path === 'uniformityTolerance.byClass.2')).toBe(false);
  });
});
