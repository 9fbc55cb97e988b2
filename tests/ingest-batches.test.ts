/**
 * Product specs, batches, load events and lab results over HTTP, against the real Postgres and Redis.
 */
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { afterAll, describe, expect, it } from 'vitest';
import { RECOMPUTE_QUEUE, recomputeDedupId } from '@ausline/contracts';
import { TEST_REDIS_URL } from './support/env.js';
import { adiWindow } from './fixtures/austempering-plant.js';
import { createBatchViaApi, postEvent, startIngestWorld, uniqueCode } from './ingest-fixtures.js';

const world = await startIngestWorld('ingest-batches');
const { http, plant, admin, quality, metallurgist, labKey, furnaceKey, bathKey } = world;

const versionBody = {
  chemistryLimits: { C: { minWtPct: 3.4, maxWtPct: 3.8 } },
  processWindow: adiWindow,
  acceptanceCriteria: { hardness: { scale: 'HBW', min: 341, max: 444 } },
};

async function heatNumberOf(heatId: string): Promise<string> {
  return (await world.db.prisma.heat.findUniqueOrThrow({ where: { id: heatId } })).heatNumber;
}

describe('product specs', () => {
  it('creates a spec (idempotent by code), drafts versions, approves them in order', async () => {
    const code = uniqueCode('SPEC');
    const spec = { code, name: 'ADI gear blank', material: 'DUCTILE_IRON' };
    const created = await http.post('/v1/specs', spec, quality.headers);
    expect(created.status).toBe(201);
    expect((await http.post('/v1/specs', spec, quality.headers)).status).toBe(200);
    const clash = await http.post('/v1/specs', { ...spec, material: 'STEEL' }, quality.headers);
    expect(clash.status).toBe(409);
    expect(clash.body.issues[0].path).toBe('material');
    const specId = created.body.spec.id;

    const v1 = await http.post(`/v1/specs/${specId}/versions`, versionBody, quality.headers);
    expect(v1.status).toBe(201);
    expect(v1.body).toMatchObject({ version: 1, status: 'DRAFT', createdBy: `user:${quality.email}` });
    const v2 = await http.post(`/v1/specs/${specId}/versions`, versionBody, quality.headers);
    expect(v2.body.version).toBe(2);

    const approve2 = await http.post(`/v1/specs/${specId}/versions/2/approve`, {}, quality.headers);
    expect(approve2.status).toBe(200);
    expect(approve2.body).toMatchObject({ status: 'APPROVED', approvedBy: `user:${quality.email}` });
    // Again: a no-op. An older draft cannot overtake the version in force.
    expect((await http.post(`/v1/specs/${specId}/versions/2/approve`, {}, quality.headers)).status).toBe(200);
    const older = await http.post(`/v1/specs/${specId}/versions/1/approve`, {}, quality.headers);
    expect(older.status).toBe(409);
    expect(older.body.message).toMatch(/older than version 2/);

    const v3 = await http.post(`/v1/specs/${specId}/versions`, versionBody, quality.headers);
    await http.post(`/v1/specs/${specId}/versions/${v3.body.version}/approve`, {}, quality.headers);
    const detail = await http.get(`/v1/specs/${specId}`, metallurgist.headers);
    expect(detail.body.versions.map((v: { version: number; status: string }) => [v.version, v.status])).toEqual([
      [1, 'DRAFT'],
      [2, 'SUPERSEDED'],
      [3, 'APPROVED'],
    ]);
    expect((await http.post(`/v1/specs/${specId}/versions/2/approve`, {}, quality.headers)).status).toBe(409);
    expect((await http.post(`/v1/specs/${specId}/versions/9/approve`, {}, quality.headers)).status).toBe(404);
    expect((await http.post(`/v1/specs/${specId}/versions/x/approve`, {}, quality.headers)).body.issues[0].path).toBe('params.version');
  });

  it('validates the version payload with the spec schemas, naming the path', async () => {
    const before = await world.db.prisma.productSpecVersion.count();
    const bad = await http.post(
      `/v1/specs/${plant.specId}/versions`,
      { ...versionBody, processWindow: { ...adiWindow, bath: { ...adiWindow.bath, minTempC: 390 } } },
      quality.headers,
    );
    expect(bad.status).toBe(400);
    expect(bad.body.issues[0].path).toBe('processWindow.bath.maxTempC');
    expect(await world.db.prisma.productSpecVersion.count()).toBe(before);
  });

  it('lets only QUALITY create, draft and approve', async () => {
    expect((await http.post('/v1/specs', { code: uniqueCode('S'), name: 'x', material: 'STEEL' }, metallurgist.headers)).status).toBe(403);
    expect((await http.post(`/v1/specs/${plant.specId}/versions/1/approve`, {}, admin.headers)).status).toBe(403);
  });
});

describe('batches', () => {
  it('creates a batch with the spec version in force; the same post is a no-op; other values are 409', async () => {
    const code = uniqueCode('LOAD');
    const body = { code, lineId: plant.lineId, heatNumber: await heatNumberOf(plant.heatId), productSpecId: plant.specId, partCount: 48, weightKg: 420, sectionShape: 'CYLINDER', sectionSizeMm: 25, scheduledHoldMin: 90 };
    const created = await http.post('/v1/batches', body, metallurgist.headers);
    expect(created.status).toBe(201);
    expect(created.body.batch).toMatchObject({ code, specVersionId: plant.specVersionId, status: 'PLANNED', stale: false });
    const again = await http.post('/v1/batches', body, metallurgist.headers);
    expect(again.status).toBe(200);
    expect(again.body.batch.id).toBe(created.body.batch.id);
    const clash = await http.post('/v1/batches', { ...body, partCount: 50, weightKg: 400 }, metallurgist.headers);
    expect(clash.status).toBe(409);
    expect(clash.body.issues.map((i: { path: string }) => i.path)).toEqual(['partCount', 'weightKg']);
  });

  it('refuses unknown references, a spec without an approved version and a heat of another material (422 naming the field)', async () => {
    const base = { code: uniqueCode('LOAD'), lineId: plant.lineId, heatId: plant.heatId, productSpecId: plant.specId, partCount: 1, weightKg: 1, sectionShape: 'PLATE', sectionSizeMm: 10 };
    const before = await world.db.prisma.batch.count();
    const noHeat = await http.post('/v1/batches', { ...base, heatId: undefined, heatNumber: 'NO-SUCH-HEAT' }, admin.headers);
    expect(noHeat.status).toBe(422);
    expect(noHeat.body.issues).toEqual([{ path: 'heatNumber', message: 'no heat NO-SUCH-HEAT; post the heat first' }]);

    const draftOnly = await world.db.prisma.productSpec.create({ data: { code: uniqueCode('P'), name: 'draft', material: 'DUCTILE_IRON' } });
    const noApproved = await http.post('/v1/batches', { ...base, productSpecId: draftOnly.id }, admin.headers);
    expect(noApproved.status).toBe(422);
    expect(noApproved.body.issues[0]).toEqual({ path: 'productSpecId', message: `product spec ${draftOnly.code} has no APPROVED version` });

    const steelHeat = await http.post('/v1/heats', { heatNumber: uniqueCode('HS'), material: 'STEEL', chemistryWtPct: { C: 0.8, Si: 1.5 } }, labKey.headers);
    const wrongMaterial = await http.post('/v1/batches', { ...base, heatId: steelHeat.body.heat.id }, admin.headers);
    expect(wrongMaterial.status).toBe(422);
    expect(wrongMaterial.body.issues[0].path).toBe('heatId');

    const bothRefs = await http.post('/v1/batches', { ...base, lineCode: 'X' }, admin.headers);
    expect(bothRefs.status).toBe(400);
    expect(bothRefs.body.issues[0].path).toBe('lineId');
    expect(await world.db.prisma.batch.count()).toBe(before);
  });

  it('lets a furnace key create batches on its own line only', async () => {
    const base = { lineId: plant.lineId, heatId: plant.heatId, productSpecId: plant.specId, partCount: 1, weightKg: 1, sectionShape: 'PLATE', sectionSizeMm: 10 };
    expect((await http.post('/v1/batches', { ...base, code: uniqueCode('LOAD') }, furnaceKey.headers)).status).toBe(201);
    // The bath key's equipment is on the line too, but it is not the furnace.
    expect((await http.post('/v1/batches', { ...base, code: uniqueCode('LOAD') }, bathKey.headers)).status).toBe(403);
  });

  it('lists batches with filters and paging', async () => {
    const a = await createBatchViaApi(world);
    await postEvent(world, a.id, 'CHARGED', Date.now() - 60_000);
    const inFurnace = await http.get(`/v1/batches?status=IN_FURNACE&lineId=${plant.lineId}`, metallurgist.headers);
    expect(inFurnace.status).toBe(200);
    expect(inFurnace.body.items.map((b: { id: string }) => b.id)).toContain(a.id);
    expect(inFurnace.body.items.every((b: { status: string }) => b.status === 'IN_FURNACE')).toBe(true);
    const byCode = await http.get(`/v1/batches?code=${a.code}`, metallurgist.headers);
    expect(byCode.body).toMatchObject({ total: 1 });
    expect(byCode.body.items[0]).toMatchObject({ line: { code: expect.any(String) }, specVersion: { version: 1 } });
    const all = await http.get('/v1/batches?limit=1', metallurgist.headers);
    expect(all.body.items).toHaveLength(1);
    expect(all.body.nextCursor).toEqual(expect.any(String));
    expect((await http.get('/v1/batches?status=BAKED', metallurgist.headers)).body.issues[0].path).toBe('query.status.0');
  });
});

describe('load events', () => {
  const t0 = Math.floor(Date.now() / 1000) * 1000 - 4 * 3_600_000;

  it('records the four steps, moves the status along, and a retry of a step is a no-op', async () => {
    const batch = await createBatchViaApi(world);
    const steps: Array<[string, number, string]> = [
      ['CHARGED', t0, 'IN_FURNACE'],
      ['OUT_OF_FURNACE', t0 + 65 * 60_000, 'IN_TRANSFER'],
      ['INTO_BATH', t0 + 65 * 60_000 + 12_000, 'IN_BATH'],
      ['OUT_OF_BATH', t0 + 155 * 60_000, 'DONE'],
    ];
    for (const [kind, at, status] of steps) {
      const reply = await postEvent(world, batch.id, kind, new Date(at).toISOString());
      expect(reply.status).toBe(201);
      expect(reply.body).toMatchObject({ outcome: 'created', batchStatus: status });
    }
    const retry = await postEvent(world, batch.id, 'INTO_BATH', t0 + 65 * 60_000 + 12_000);
    expect(retry.status).toBe(200);
    expect(retry.body.outcome).toBe('unchanged');
    expect(await world.db.prisma.loadEvent.count({ where: { batchId: batch.id } })).toBe(4);
  });

  it('refuses another time for a recorded step (409) and a time against the order of steps (422)', async () => {
    const batch = await createBatchViaApi(world);
    await postEvent(world, batch.id, 'CHARGED', t0);
    const moved = await postEvent(world, batch.id, 'CHARGED', t0 + 1000);
    expect(moved.status).toBe(409);
    expect(moved.body.issues[0].path).toBe('at');

    // Steps may arrive out of order (two controllers), but their times must fit.
    expect((await postEvent(world, batch.id, 'INTO_BATH', t0 + 70 * 60_000)).status).toBe(201);
    const early = await postEvent(world, batch.id, 'OUT_OF_FURNACE', t0 + 80 * 60_000);
    expect(early.status).toBe(422);
    expect(early.body.issues[0]).toMatchObject({ path: 'at' });
    expect(early.body.issues[0].message).toMatch(/is not before INTO_BATH/);
    const backwards = await postEvent(world, batch.id, 'OUT_OF_BATH', t0 - 1000);
    expect(backwards.status).toBe(422);
    // The transfer may be reported as one instant by one-second controllers.
    expect((await postEvent(world, batch.id, 'OUT_OF_FURNACE', t0 + 70 * 60_000)).status).toBe(201);
    expect(await world.db.prisma.loadEvent.count({ where: { batchId: batch.id } })).toBe(3);
  });

  it('checks the reporting equipment: kind, line and key scope', async () => {
    const batch = await createBatchViaApi(world);
    const bathCharging = await http.post(`/v1/batches/${batch.id}/events`, { kind: 'CHARGED', at: t0, equipmentId: plant.bathId }, bathKey.headers);
    expect(bathCharging.status).toBe(422);
    expect(bathCharging.body.issues[0]).toEqual({ path: 'equipmentId', message: 'CHARGED needs a FURNACE' });
    const wrongKey = await http.post(`/v1/batches/${batch.id}/events`, { kind: 'CHARGED', at: t0, equipmentId: plant.furnaceId }, bathKey.headers);
    expect(wrongKey.status).toBe(403);
    const furnace = await world.db.prisma.equipment.findUniqueOrThrow({ where: { id: plant.furnaceId } });
    const byCode = await http.post(`/v1/batches/${batch.id}/events`, { kind: 'CHARGED', at: t0, equipmentCode: furnace.code }, furnaceKey.headers);
    expect(byCode.status).toBe(201);
    const future = await http.post(`/v1/batches/${batch.id}/events`, { kind: 'OUT_OF_FURNACE', at: Date.now() + 3_600_000, equipmentId: plant.furnaceId }, furnaceKey.headers);
    expect(future.status).toBe(422);
    expect(future.body.issues[0].path).toBe('at');
    const unknownBatch = await http.post(`/v1/batches/${crypto.randomUUID()}/events`, { kind: 'CHARGED', at: t0, equipmentId: plant.furnaceId }, furnaceKey.headers);
    expect(unknownBatch.status).toBe(404);
  });
});

describe('lab results', () => {
  it('records hardness with scale and standard; a retry is a no-op; other values under the same ref are 409', async () => {
    const batch = await createBatchViaApi(world);
    // 341-444 HBW is the typical hardness of ASTM A897 grade 3 (practice.md §1.4, A897-16 Table 1).
    const body = { kind: 'HARDNESS', scale: 'HBW', testStandard: 'ISO 6506-1', readings: [388, 392, 401], externalRef: 'LAB-7731', location: 'Y-block 25 mm' };
    const created = await http.post(`/v1/batches/${batch.id}/lab-results`, body, labKey.headers);
    expect(created.status).toBe(201);
    expect(created.body.labResult).toMatchObject({ kind: 'HARDNESS', scale: 'HBW', testStandard: 'ISO 6506-1', values: { n: 3, min: 388, max: 401 } });
    expect(created.body.labResult.values.mean).toBeCloseTo(393.667, 3);
    expect((await http.post(`/v1/batches/${batch.id}/lab-results`, body, labKey.headers)).status).toBe(200);
    const changed = await http.post(`/v1/batches/${batch.id}/lab-results`, { ...body, readings: [388, 392, 402] }, labKey.headers);
    expect(changed.status).toBe(409);
    expect(await world.db.prisma.labResult.count({ where: { batchId: batch.id } })).toBe(1);
  });

  it('records retained austenite, tensile and impact results', async () => {
    const batch = await createBatchViaApi(world);
    const results = [
      { kind: 'RETAINED_AUSTENITE', method: 'XRD', testStandard: 'ASTM E975', volumePct: 27.5, externalRef: 'RA-1' },
      { kind: 'TENSILE', testStandard: 'ISO 6892-1', rmMPa: 1080, rp02MPa: 790, elongationPct: 7.5, externalRef: 'T-1' },
      { kind: 'IMPACT', testStandard: 'ISO 148-1', notch: 'UNNOTCHED', energiesJ: [96, 102, 99], temperatureC: 22, externalRef: 'I-1' },
    ];
    for (const r of results) expect((await http.post(`/v1/batches/${batch.id}/lab-results`, r, metallurgist.headers)).status).toBe(201);
    const detail = await http.get(`/v1/batches/${batch.id}`, metallurgist.headers);
    expect(detail.body.labResults.map((r: { kind: string }) => r.kind).sort()).toEqual(['IMPACT', 'RETAINED_AUSTENITE', 'TENSILE']);
  });

  it('refuses a hardness standard of another scale naming testStandard, and writes nothing', async () => {
    const batch = await createBatchViaApi(world);
    const bad = await http.post(
      `/v1/batches/${batch.id}/lab-results`,
      { kind: 'HARDNESS', scale: 'HRC', testStandard: 'ISO 6506-1', readings: [55], externalRef: 'X' },
      labKey.headers,
    );
    expect(bad.status).toBe(400);
    expect(bad.body.issues[0].path).toBe('testStandard');
    expect(await world.db.prisma.labResult.count({ where: { batchId: batch.id } })).toBe(0);
  });
});

describe('GET /v1/batches/:id', () => {
  it('returns events, a per-channel samples summary over the load window, deviations and a null prediction', async () => {
    const batch = await createBatchViaApi(world);
    const t = Math.floor(Date.now() / 1000) * 1000 - 3 * 3_600_000;
    await postEvent(world, batch.id, 'CHARGED', t);
    await postEvent(world, batch.id, 'OUT_OF_FURNACE', t + 600_000);
    await postEvent(world, batch.id, 'INTO_BATH', t + 610_000);
    await postEvent(world, batch.id, 'OUT_OF_BATH', t + 1_200_000);
    const bath = [
      { channel: 'tc1', t: t + 620_000, value: 371 },
      { channel: 'tc1', t: t + 630_000, value: 368.5 },
      { channel: 'tc1', t: t + 640_000, value: 374 },
      // Outside the load's window: not in the summary.
      { channel: 'tc1', t: t + 3_000_000, value: 999 },
    ];
    await http.post(`/v1/equipment/${plant.bathId}/samples`, { samples: bath }, bathKey.headers);

    const detail = await http.get(`/v1/batches/${batch.id}`, metallurgist.headers);
    expect(detail.status).toBe(200);
    expect(detail.body.events.map((e: { kind: string }) => e.kind)).toEqual(['CHARGED', 'OUT_OF_FURNACE', 'INTO_BATH', 'OUT_OF_BATH']);
    expect(detail.body.samplesWindow).toEqual({ from: new Date(t).toISOString(), to: new Date(t + 1_200_000).toISOString(), open: false });
    const tc1 = detail.body.samplesSummary.find((c: { channelCode: string }) => c.channelCode === 'tc1');
    expect(tc1).toMatchObject({
      count: 3,
      min: 368.5,
      max: 374,
      first: { t: new Date(t + 620_000).toISOString(), value: 371 },
      last: { t: new Date(t + 640_000).toISOString(), value: 374 },
    });
    const tc2 = detail.body.samplesSummary.find((c: { channelCode: string }) => c.channelCode === 'tc2');
    expect(tc2).toMatchObject({ count: 0, min: null, first: null });
    expect(detail.body).toMatchObject({ latestPrediction: null, deviations: [], status: 'DONE', spec: { version: 1 } });
    expect((await http.get(`/v1/batches/${crypto.randomUUID()}`, metallurgist.headers)).status).toBe(404);
  });
});

describe('recompute on heat revisions, events and lab results', () => {
  const queue = new Queue(RECOMPUTE_QUEUE, { connection: new Redis(TEST_REDIS_URL, { maxRetriesPerRequest: null }), prefix: world.config.QUEUE_PREFIX });
  afterAll(async () => {
    await queue.close();
  });
  const queuedFor = async (batchId: string) => {
    const jobId = await queue.getDeduplicationJobId(recomputeDedupId(batchId));
    return jobId ? ((await queue.getJob(jobId))?.data as { batchId: string; reason: string } | undefined) : undefined;
  };

  it('queues the batches of a heat when its chemistry is revised', async () => {
    const heatNumber = uniqueCode('HR');
    const chemistry = { C: 3.55, Si: 2.45, Mn: 0.28, Mg: 0.042 };
    expect((await http.post('/v1/heats', { heatNumber, material: 'DUCTILE_IRON', chemistryWtPct: chemistry }, labKey.headers)).status).toBe(201);
    const batch = await http.post(
      '/v1/batches',
      { code: uniqueCode('LOAD'), lineId: plant.lineId, heatNumber, productSpecId: plant.specId, partCount: 10, weightKg: 90, sectionShape: 'PLATE', sectionSizeMm: 12 },
      admin.headers,
    );
    const batchId: string = batch.body.batch.id;
    expect(await queuedFor(batchId)).toBeUndefined();
    const revised = await http.post('/v1/heats', { heatNumber, material: 'DUCTILE_IRON', chemistryWtPct: { ...chemistry, Si: 2.6 }, revisionReason: 'foundry re-analysed the coupon' }, labKey.headers);
    expect(revised.body.outcome).toBe('revised');
    expect(await queuedFor(batchId)).toMatchObject({ batchId, reason: 'heat' });
  });

  it('queues the batch of a new load event and of a new lab result, not of a retried one', async () => {
    const batch = await createBatchViaApi(world);
    await postEvent(world, batch.id, 'CHARGED', Date.now() - 3_600_000);
    expect(await queuedFor(batch.id)).toMatchObject({ batchId: batch.id, reason: 'load-event' });
    const waitingJobId = await queue.getDeduplicationJobId(recomputeDedupId(batch.id));
    const lab = { kind: 'RETAINED_AUSTENITE', method: 'XRD', testStandard: 'ASTM E975', volumePct: 25, externalRef: uniqueCode('RA') };
    const posted = await http.post(`/v1/batches/${batch.id}/lab-results`, lab, labKey.headers);
    expect(posted.status).toBe(201);
    // Coalesced (recomputeJobOptions): the lab result folds into the job still waiting, which reads everything when
    // it runs; no second job is queued.
    expect(await queue.getDeduplicationJobId(recomputeDedupId(batch.id))).toBe(waitingJobId);
    expect((await queue.getJobs(['waiting', 'delayed'])).filter((j) => j.data.batchId === batch.id)).toHaveLength(1);
  });
});
