/**
 * The foundation issue's "Done when", tried as a new user would, with the real API and worker running
 * in this process against the real Postgres and Redis:
 *   an admin is created (the create-admin command's function) and signs in; the admin sets up a line, a
 *   furnace and a bath with channels, people and keys through the API; QUALITY creates and approves a
 *   product spec; the lab posts the heat; a batch is created; the controllers post load events and the
 *   furnace and bath logs, the bath log with a temperature excursion;
 *   within two seconds the deviation shows in GET /v1/deviations and on GET /v1/stream;
 *   posting the same samples again stores nothing new; a malformed payload gets a 4xx naming the field.
 *
 * The process window is an ADI recipe inside practice.md §2.2 (austenitize 850–950 °C for 15–120 min,
 * salt 230–400 °C for 30–240 min [S33]) with a 20 s transfer limit (§2.4, [M]); the invented logs hold it
 * everywhere except a 5-minute bath excursion to 392 °C, beyond the band's 120 s allowance.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { loadConfig } from '@ausline/contracts';
import { createAdmin } from '../apps/api/src/cli/create-admin.js';
import { createApiApp } from '../apps/api/src/create-api-app.js';
import { startWorker } from '../apps/worker/src/start-worker.js';
import { adiWindow } from './fixtures/austempering-plant.js';
import { httpClient, openEventStream, type Http, type Reply } from './ingest-fixtures.js';
import { createTestDatabase } from './support/database.js';
import { testAppEnv } from './support/env.js';
import { testQueuePrefix } from './support/redis.js';

const db = await createTestDatabase();
const config = loadConfig(testAppEnv({ databaseUrl: db.url, queuePrefix: testQueuePrefix('e2e-foundation') }, { LOG_LEVEL: 'silent', RECONCILE_INTERVAL_S: '2' }));
const api = await createApiApp(config);
const worker = await startWorker(config, { metricsPort: null, aliveFile: null });
afterAll(async () => {
  await worker.close();
  await api.close();
});
const http: Http = httpClient(api.url);

function expectStatus(reply: Reply, status: number): Reply {
  if (reply.status !== status) throw new Error(`expected ${status}, got ${reply.status}: ${JSON.stringify(reply.body)}`);
  return reply;
}
const bearer = (token: string) => ({ authorization: `Bearer ${token}` });
const apiKey = (key: string) => ({ authorization: `ApiKey ${key}` });

async function signIn(email: string, password: string): Promise<Record<string, string>> {
  const reply = expectStatus(await http.post('/v1/auth/login', { email, password }), 200);
  return bearer(reply.body.token);
}

/** Small, deterministic wiggle: a live thermocouple never reads flat (the flat-line rule would object). */
const wiggle = (i: number, amplitudeC: number) => amplitudeC * Math.sin(i / 5);

describe('foundation, end to end', () => {
  it('from an empty plant to a bath deviation on the list and on the stream, retries storing nothing', async () => {
    // --- an admin is created and signs in ----------------------------------------------------------
    const created = await createAdmin(db.prisma, { email: 'admin@plant.test', displayName: 'Plant Admin' });
    if (!created.ok) throw new Error(created.reason);
    const admin = await signIn('admin@plant.test', created.oneTimePassword);

    // --- the plant: a line, a furnace with two zones, a bath with two thermocouples -------------------
    const line = expectStatus(await http.post('/v1/lines', { code: 'AUS-1', name: 'Austemper line 1', timeZone: 'Europe/Berlin' }, admin), 201).body;
    const furnace = expectStatus(await http.post(`/v1/lines/${line.id}/equipment`, { kind: 'FURNACE', code: 'AUS-1-F', name: 'Austenitizing furnace' }, admin), 201).body;
    const bath = expectStatus(await http.post(`/v1/lines/${line.id}/equipment`, { kind: 'BATH', code: 'AUS-1-B', name: 'Salt bath' }, admin), 201).body;
    for (const code of ['zone1', 'zone2']) {
      expectStatus(await http.post(`/v1/equipment/${furnace.id}/channels`, { code, quantity: 'TEMPERATURE_C', role: 'FURNACE_ZONE' }, admin), 201);
    }
    for (const code of ['tc1', 'tc2']) {
      expectStatus(await http.post(`/v1/equipment/${bath.id}/channels`, { code, quantity: 'TEMPERATURE_C', role: 'BATH_TC' }, admin), 201);
    }

    // --- people and keys -----------------------------------------------------------------------------
    const password = 'correct horse battery staple';
    expectStatus(await http.post('/v1/users', { email: 'quality@plant.test', displayName: 'Q. Engineer', roles: ['QUALITY'], password }, admin), 201);
    expectStatus(await http.post('/v1/users', { email: 'metallurgist@plant.test', displayName: 'M. Etallurgist', roles: ['METALLURGIST'], password }, admin), 201);
    const quality = await signIn('quality@plant.test', password);
    const metallurgistLogin = expectStatus(await http.post('/v1/auth/login', { email: 'metallurgist@plant.test', password }), 200).body;
    const metallurgist = bearer(metallurgistLogin.token);
    const furnaceKey = apiKey(expectStatus(await http.post('/v1/api-keys', { label: 'furnace PLC', scope: 'EQUIPMENT', equipmentIds: [furnace.id] }, admin), 201).body.key);
    const bathKey = apiKey(expectStatus(await http.post('/v1/api-keys', { label: 'bath PLC', scope: 'EQUIPMENT', equipmentIds: [bath.id] }, admin), 201).body.key);
    const labKey = apiKey(expectStatus(await http.post('/v1/api-keys', { label: 'lab LIMS', scope: 'LAB' }, admin), 201).body.key);

    // --- a product spec (QUALITY) and a heat (lab) ---------------------------------------------------
    const spec = expectStatus(await http.post('/v1/specs', { code: 'ADI-1050', name: 'ADI steering knuckle', material: 'DUCTILE_IRON' }, quality), 201).body.spec;
    const version = expectStatus(
      await http.post(`/v1/specs/${spec.id}/versions`, { chemistryLimits: { C: { minWtPct: 3.4, maxWtPct: 3.8 } }, processWindow: adiWindow, acceptanceCriteria: {} }, quality),
      201,
    ).body;
    expectStatus(await http.post(`/v1/specs/${spec.id}/versions/${version.version}/approve`, {}, quality), 200);
    expectStatus(
      await http.post('/v1/heats', { heatNumber: 'F-26-0417', material: 'DUCTILE_IRON', grade: 'EN-GJS-1050-6', chemistryWtPct: { C: 3.6, Si: 2.5, Mn: 0.3, Cu: 0.6, Ni: 0.5 }, source: 'foundry-spectrometer' }, labKey),
      201,
    );

    // --- a batch, and its load events on device time, three hours ago --------------------------------
    const batch = expectStatus(
      await http.post('/v1/batches', { code: 'LOAD-0118', lineCode: 'AUS-1', heatNumber: 'F-26-0417', productSpecCode: 'ADI-1050', partCount: 48, weightKg: 420, sectionShape: 'CYLINDER', sectionSizeMm: 25 }, admin),
      201,
    ).body.batch;
    const chargedMs = Math.floor(Date.now() / 10_000) * 10_000 - 3 * 3_600_000;
    const outOfFurnaceMs = chargedMs + 65 * 60_000; // 65 min soak >= 60 min
    const intoBathMs = outOfFurnaceMs + 12_000; // 12 s transfer <= 20 s
    const outOfBathMs = intoBathMs + 90 * 60_000; // 90 min hold within 60..120 min
    const events: Array<[string, number, Record<string, string>]> = [
      ['CHARGED', chargedMs, furnaceKey],
      ['OUT_OF_FURNACE', outOfFurnaceMs, furnaceKey],
      ['INTO_BATH', intoBathMs, bathKey],
      ['OUT_OF_BATH', outOfBathMs, bathKey],
    ];
    for (const [kind, at, key] of events) {
      expectStatus(await http.post(`/v1/batches/${batch.id}/events`, { kind, at: new Date(at).toISOString(), equipmentId: kind.includes('BATH') ? bath.id : furnace.id }, key), 201);
    }

    // --- the furnace log: both zones at 900 ± 2 °C every 10 s ------------------------------------------
    const furnaceSamples = [];
    for (let t = chargedMs - 20_000, i = 0; t <= outOfFurnaceMs; t += 10_000, i++) {
      furnaceSamples.push({ channel: 'zone1', t, value: 900 + wiggle(i, 2) }, { channel: 'zone2', t, value: 899 + wiggle(i + 3, 2) });
    }
    expectStatus(await http.post(`/v1/equipment/${furnace.id}/samples`, { samples: furnaceSamples }, furnaceKey), 200);

    // --- subscribe to the live stream as a browser would (token in the query) ------------------------
    const stream = await openEventStream(`${api.url}/v1/stream?token=${encodeURIComponent(metallurgistLogin.token)}&batchId=${batch.id}`);
    expect(stream.status).toBe(200);
    await stream.waitFor((m) => m.comment?.startsWith('connected') === true);

    // --- the bath log: 370 ± 1.5 °C, except 392 °C for 5 minutes from 30 min into the hold -------------
    const excursionFrom = intoBathMs + 30 * 60_000;
    const excursionTo = excursionFrom + 5 * 60_000;
    const bathSamples = [];
    for (let t = intoBathMs - 20_000, i = 0; t <= outOfBathMs; t += 10_000, i++) {
      const inExcursion = t >= excursionFrom && t < excursionTo;
      const base = inExcursion ? 392 : 370;
      bathSamples.push({ channel: 'tc1', t: new Date(t).toISOString(), value: base + wiggle(i, 1.5) }, { channel: 'tc2', t: new Date(t).toISOString(), value: base - 0.5 + wiggle(i + 2, 1.5) });
    }
    const posted = expectStatus(await http.post(`/v1/equipment/${bath.id}/samples`, { samples: bathSamples }, bathKey), 200);
    const postedAt = performance.now();
    expect(posted.body).toMatchObject({ stored: bathSamples.length, duplicates: 0, rejected: 0, batchesQueued: 1 });

    // --- within two seconds: on the list (one deviation per thermocouple that left the band) ... -------
    type Listed = { id: string; rule: string; status: string; batchId: string; channel: { code: string } | null; message: string };
    let listed: Listed[] = [];
    while (listed.length < 2 && performance.now() - postedAt < 2_000) {
      const list = expectStatus(await http.get(`/v1/deviations?rule=bath-band-excursion&lineId=${line.id}`, metallurgist), 200);
      listed = list.body.items.filter((d: Listed) => d.batchId === batch.id);
      if (listed.length < 2) await new Promise((resolve) => setTimeout(resolve, 100));
    }
    const listedAfterMs = performance.now() - postedAt;
    expect(listed.map((d) => d.channel?.code).sort(), 'a bath-band-excursion deviation per thermocouple, listed within 2 s').toEqual(['tc1', 'tc2']);
    expect(listedAfterMs).toBeLessThan(2_000);
    for (const d of listed) expect(d).toMatchObject({ rule: 'bath-band-excursion', status: 'OPEN', batchId: batch.id });

    // ... and on the stream.
    const remainingMs = Math.max(0, 2_000 - (performance.now() - postedAt));
    const streamed = await stream.waitFor((m) => m.event === 'deviation.changed' && m.data!.includes('bath-band-excursion'), remainingMs + 50);
    const streamedEvent = JSON.parse(streamed.data!);
    expect(streamedEvent).toMatchObject({ type: 'deviation.changed', batchId: batch.id, lineId: line.id, status: 'OPEN', rule: 'bath-band-excursion' });
    expect(listed.map((d) => d.id)).toContain(streamedEvent.deviationId);
    stream.close();

    // The logs hold the window everywhere else: no other rule stands for this batch. (A recompute that ran
    // between the load events and the bath log may have seen the bath channels empty and opened a
    // channel-gap deviation; the recompute after the log then CLEARED it, kept in history.)
    const all = expectStatus(await http.get(`/v1/deviations?batchId=${batch.id}`, metallurgist), 200).body;
    const standing = all.items.filter((d: { status: string }) => d.status !== 'CLEARED');
    expect(standing.map((d: { rule: string }) => d.rule)).toEqual(['bath-band-excursion', 'bath-band-excursion']);

    // --- posting the same samples again stores nothing new ----------------------------------------------
    const sampleRowsBefore = await db.prisma.sample.count();
    const again = expectStatus(await http.post(`/v1/equipment/${bath.id}/samples`, { samples: bathSamples }, bathKey), 200);
    expect(again.body).toMatchObject({ stored: 0, duplicates: bathSamples.length, batchesQueued: 0 });
    expect(await db.prisma.sample.count()).toBe(sampleRowsBefore);

    // --- a malformed payload gets a 4xx naming the field, and writes nothing ---------------------------
    const malformed = await http.post(
      `/v1/equipment/${bath.id}/samples`,
      { samples: [{ channel: 'tc1', t: new Date(outOfBathMs + 60_000).toISOString(), value: 371 }, { channel: 'tc1', t: new Date(outOfBathMs + 70_000).toISOString(), value: 'hot' }] },
      bathKey,
    );
    expect(malformed.status).toBe(400);
    expect(malformed.body.issues[0].path).toBe('samples.1.value');
    expect(malformed.body.message).toContain('samples.1.value');
    expect(await db.prisma.sample.count()).toBe(sampleRowsBefore);

    // --- the batch view shows it all ---------------------------------------------------------------------
    const detail = expectStatus(await http.get(`/v1/batches/${batch.id}`, metallurgist), 200).body;
    expect(detail.status).toBe('DONE');
    expect(detail.deviations.filter((d: { status: string }) => d.status !== 'CLEARED').map((d: { id: string }) => d.id).sort()).toEqual(listed.map((d) => d.id).sort());
    const tc1 = detail.samplesSummary.find((c: { channelCode: string }) => c.channelCode === 'tc1');
    expect(tc1.max).toBeGreaterThan(390);
    // The metallurgical prediction (issue 4) follows the process-window result in its own transaction: a real one.
    let prediction = detail.latestPrediction;
    for (const deadline = Date.now() + 30_000; !prediction && Date.now() < deadline; ) {
      await new Promise((resolve) => setTimeout(resolve, 200));
      prediction = expectStatus(await http.get(`/v1/batches/${batch.id}`, metallurgist), 200).body.latestPrediction;
    }
    expect(prediction).toMatchObject({ phase: 'DONE', result: { modelVersion: expect.stringMatching(/^ausline-metallurgy\//) } });

    // One deviation per condition, not one per recompute (the re-post and the reconciler recompute too).
    expect(await db.prisma.deviation.count({ where: { batchId: batch.id, rule: 'bath-band-excursion' } })).toBe(2);
  });
});
