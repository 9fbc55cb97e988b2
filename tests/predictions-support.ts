/**
 * Shared world of the prediction tests (issue 4 items 1–3, 6): the real API and worker in this process on their own
 * database and queue prefix, a plant set up through the API, and a runner that puts one invented load through it
 * (spec, heat, batch, load events, furnace and bath logs posted by the controllers' keys) and waits for the worker's
 * prediction. Every plant, heat, spec and reading here is invented.
 *
 * The worker predicts with 200 ensemble members (production: 1,000) to keep the suite's runtime reasonable.
 */
import { afterAll } from 'vitest';
import { randomBytes } from 'node:crypto';
import { loadConfig, type AcceptanceCriteria, type PredictionRow, type ProcessWindow } from '@ausline/contracts';
import { createApiApp } from '../apps/api/src/create-api-app.js';
import { createApiKeyFor, createUserWithSession, type TestKey, type TestUser } from '../apps/api/test/support/principals.js';
import { startWorker, type RunningWorker } from '../apps/worker/src/start-worker.js';
import { httpClient, type Http, type Reply } from './ingest-fixtures.js';
import { createTestDatabase } from './support/database.js';
import { testAppEnv } from './support/env.js';
import { deleteRedisKeys, testQueuePrefix } from './support/redis.js';

export const PREDICTION_SAMPLES = 200;
const MIN = 60_000;

export interface World {
  http: Http;
  admin: TestUser;
  quality: TestUser;
  metallurgist: TestUser;
  labKey: TestKey;
  worker: RunningWorker;
  /** BullMQ prefix of this world's queues. */
  queuePrefix: string;
  prisma: Awaited<ReturnType<typeof createTestDatabase>>['prisma'];
  /** Adds a line (furnace with two zones; bath with two thermocouples and an agitator) through the API. */
  plant(code?: string): Promise<Plant>;
}

export interface Plant {
  lineId: string;
  lineCode: string;
  furnaceId: string;
  bathId: string;
  furnaceKey: TestKey;
  bathKey: TestKey;
}

export function expectStatus<T = any>(reply: Reply<T>, status: number): Reply<T> {
  if (reply.status !== status) throw new Error(`expected ${status}, got ${reply.status}: ${JSON.stringify(reply.body)}`);
  return reply;
}

/** Starts the API and the worker for one test file (top level), closed after the file. */
export async function startPredictionWorld(label: string): Promise<World> {
  const db = await createTestDatabase();
  const prefix = testQueuePrefix(label);
  const config = loadConfig(testAppEnv({ databaseUrl: db.url, queuePrefix: prefix }, { LOG_LEVEL: 'silent' }));
  const api = await createApiApp(config);
  const worker = await startWorker(config, {
    metricsPort: null,
    aliveFile: null,
    reconcile: false,
    prediction: { samples: PREDICTION_SAMPLES, seed: 1 },
  });
  afterAll(async () => {
    await worker.close();
    await api.close();
    await deleteRedisKeys(prefix);
  });
  const http = httpClient(api.url);
  const admin = await createUserWithSession(api.app, { roles: ['ADMIN'] });
  const quality = await createUserWithSession(api.app, { roles: ['QUALITY'] });
  const metallurgist = await createUserWithSession(api.app, { roles: ['METALLURGIST'] });
  const labKey = await createApiKeyFor(api.app, { scope: 'LAB' });
  return {
    http,
    admin,
    quality,
    metallurgist,
    labKey,
    worker,
    queuePrefix: prefix,
    prisma: db.prisma,
    async plant(code = `PL-${randomBytes(3).toString('hex').toUpperCase()}`) {
      // The line's bath heat transfer per agitation level, W/(m² K): the plant's own calibration (invented values).
      const line = expectStatus(await http.post('/v1/lines', { code, name: `Line ${code}`, timeZone: 'UTC', hCoefficientByAgitation: { still: 700, normal: 1400, high: 2000 } }, admin.headers), 201).body;
      const furnace = expectStatus(await http.post(`/v1/lines/${line.id}/equipment`, { kind: 'FURNACE', code: `${code}-F`, name: 'Furnace' }, admin.headers), 201).body;
      const bath = expectStatus(await http.post(`/v1/lines/${line.id}/equipment`, { kind: 'BATH', code: `${code}-B`, name: 'Salt bath' }, admin.headers), 201).body;
      for (const c of ['zone1', 'zone2']) expectStatus(await http.post(`/v1/equipment/${furnace.id}/channels`, { code: c, quantity: 'TEMPERATURE_C', role: 'FURNACE_ZONE' }, admin.headers), 201);
      for (const c of ['tc1', 'tc2']) expectStatus(await http.post(`/v1/equipment/${bath.id}/channels`, { code: c, quantity: 'TEMPERATURE_C', role: 'BATH_TC' }, admin.headers), 201);
      expectStatus(await http.post(`/v1/equipment/${bath.id}/channels`, { code: 'agitator', quantity: 'AGITATION_RPM', role: 'BATH_AGITATION' }, admin.headers), 201);
      return {
        lineId: line.id,
        lineCode: code,
        furnaceId: furnace.id,
        bathId: bath.id,
        furnaceKey: await createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [furnace.id] }),
        bathKey: await createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [bath.id] }),
      };
    },
  };
}

// ---------------------------------------------------------------------------------------------
// Invented materials and recipes
// ---------------------------------------------------------------------------------------------

/** An invented Si–Mn–Cr–Mo bolt steel (not a standard grade). */
export const BOLT_STEEL = { C: 0.45, Si: 1.5, Mn: 1.4, Cr: 0.5, Mo: 0.25, P: 0.011, S: 0.008 };
/** The same bolt steel from a heat that came in low in silicon. */
export const BOLT_STEEL_LOW_SI = { ...BOLT_STEEL, Si: 0.4 };
/** An invented Cu–Ni alloyed ductile iron. */
export const DUCTILE_IRON = { C: 3.6, Si: 2.5, Mn: 0.3, Cu: 0.6, Ni: 0.5 };

export const SIGNAL = {
  maxChannelGapS: 30,
  flatline: { minDurationS: 1800, epsilonC: 0.01 },
  plausible: { minTempC: 0, maxTempC: 1100, maxRateCPerS: 20 },
  twinTolerance: { maxDiffC: 4, minDurationS: 120 },
} as const;

/** The bolt recipe: austenitize 880–910 °C, salt 325–345 °C (nominal 335 °C), 45–240 min. */
export function steelWindow(bath: Partial<ProcessWindow['bath']> = {}): ProcessWindow {
  return {
    austenitize: { minTempC: 880, maxTempC: 910, minMinutes: 20, maxMinutes: 180 },
    maxTransferS: 20,
    bath: { minTempC: 325, maxTempC: 345, maxExcursionS: 600, minHoldMin: 45, maxHoldMin: 240, ...bath },
    ...SIGNAL,
  };
}

/** The ADI recipe: austenitize 890–910 °C, salt 360–380 °C, 60–240 min. */
export function ironWindow(): ProcessWindow {
  return {
    austenitize: { minTempC: 890, maxTempC: 910, minMinutes: 20, maxMinutes: 180 },
    maxTransferS: 20,
    bath: { minTempC: 360, maxTempC: 380, maxExcursionS: 600, minHoldMin: 60, maxHoldMin: 240 },
    ...SIGNAL,
  };
}

export async function createSpec(
  w: World,
  o: { material?: 'STEEL' | 'DUCTILE_IRON'; criteria: AcceptanceCriteria; window?: ProcessWindow; chemistryLimits?: Record<string, { minWtPct?: number; maxWtPct?: number }> },
): Promise<{ id: string; code: string; versionId: string }> {
  const code = `SP-${randomBytes(3).toString('hex').toUpperCase()}`;
  const material = o.material ?? 'STEEL';
  const spec = expectStatus(await w.http.post('/v1/specs', { code, name: `Spec ${code}`, material }, w.quality.headers), 201).body.spec;
  const window = o.window ?? (material === 'STEEL' ? steelWindow() : ironWindow());
  const version = expectStatus(
    await w.http.post(`/v1/specs/${spec.id}/versions`, { chemistryLimits: o.chemistryLimits ?? {}, processWindow: window, acceptanceCriteria: o.criteria }, w.quality.headers),
    201,
  ).body;
  expectStatus(await w.http.post(`/v1/specs/${spec.id}/versions/${version.version}/approve`, {}, w.quality.headers), 200);
  return { id: spec.id, code, versionId: version.id };
}

export async function postHeat(w: World, chemistryWtPct: Record<string, number>, material: 'STEEL' | 'DUCTILE_IRON' = 'STEEL'): Promise<{ id: string; heatNumber: string }> {
  const heatNumber = `HT-${randomBytes(3).toString('hex').toUpperCase()}`;
  const reply = expectStatus(await w.http.post('/v1/heats', { heatNumber, material, grade: 'invented', chemistryWtPct, source: 'mill-certificate' }, w.labKey.headers), 201);
  return { id: reply.body.heat?.id ?? reply.body.id, heatNumber };
}

// ---------------------------------------------------------------------------------------------
// A load through the plant
// ---------------------------------------------------------------------------------------------

export interface LoadPlan {
  plant: Plant;
  /** Time slot (6 h each, counted back from now): loads of one line must not overlap. */
  slot: number;
  heatNumber: string;
  specCode: string;
  sectionShape?: 'PLATE' | 'CYLINDER' | 'SQUARE_BAR';
  sectionSizeMm?: number;
  bathC: number;
  /** Time in the bath; for a load still in the bath, the scheduled hold unless `scheduledHoldMin` says otherwise. */
  holdMin: number;
  /** Load still in the bath: bath readings exist up to this many minutes after INTO_BATH, no OUT_OF_BATH. */
  loggedMin?: number;
  scheduledHoldMin?: number;
  transferS?: number;
  /** Agitator speed around the immersion (0 = stopped). */
  agitatorRpm?: number;
}

export interface LoadTimes {
  chargedMs: number;
  outOfFurnaceMs: number;
  intoBathMs: number;
  outOfBathMs: number;
}

const SLOT_MS = 6 * 60 * MIN;
const BASE_MS = Math.floor(Date.now() / MIN) * MIN - 400 * 60 * MIN;

export function loadTimes(plan: Pick<LoadPlan, 'slot' | 'holdMin' | 'transferS'>): LoadTimes {
  const chargedMs = BASE_MS + plan.slot * SLOT_MS;
  const outOfFurnaceMs = chargedMs + 50 * MIN;
  const intoBathMs = outOfFurnaceMs + (plan.transferS ?? 10) * 1000;
  return { chargedMs, outOfFurnaceMs, intoBathMs, outOfBathMs: intoBathMs + plan.holdMin * MIN };
}

/** The bath log of a load: two thermocouples every 10 s, the load's heat lifting the salt a few °C for minutes. */
export function bathReadings(plan: LoadPlan, fromMin = -0.5, toMin?: number): Array<{ channel: string; t: number; value: number }> {
  const t = loadTimes(plan);
  const endMs = t.intoBathMs + (toMin ?? plan.loggedMin ?? plan.holdMin) * MIN;
  const out: Array<{ channel: string; t: number; value: number }> = [];
  for (let ms = t.intoBathMs + fromMin * MIN, i = Math.round((fromMin * MIN) / 10_000); ms <= endMs; ms += 10_000, i++) {
    const sinceS = (ms - t.intoBathMs) / 1000;
    const rise = sinceS > 0 ? 4 * Math.exp(-sinceS / 240) : 0;
    out.push({ channel: 'tc1', t: ms, value: round(plan.bathC + rise + 0.3 * Math.sin(i * 0.37) - 0.2, 2) });
    out.push({ channel: 'tc2', t: ms, value: round(plan.bathC + rise + 0.3 * Math.sin(i * 0.37 + 1) + 0.2, 2) });
  }
  return out;
}

/** Creates the batch, posts its events and logs; returns without waiting for the worker. */
export async function postLoad(w: World, plan: LoadPlan, options: { bath?: boolean } = {}): Promise<{ batchId: string; times: LoadTimes; code: string }> {
  const times = loadTimes(plan);
  const code = `LD-${randomBytes(4).toString('hex').toUpperCase()}`;
  const batch = expectStatus(
    await w.http.post(
      '/v1/batches',
      {
        code,
        lineCode: plan.plant.lineCode,
        heatNumber: plan.heatNumber,
        productSpecCode: plan.specCode,
        partCount: 200,
        weightKg: 300,
        sectionShape: plan.sectionShape ?? 'CYLINDER',
        sectionSizeMm: plan.sectionSizeMm ?? 8,
        ...(plan.scheduledHoldMin !== undefined ? { scheduledHoldMin: plan.scheduledHoldMin } : plan.loggedMin === undefined ? {} : { scheduledHoldMin: plan.holdMin }),
      },
      w.admin.headers,
    ),
    201,
  ).body.batch;
  const p = plan.plant;
  const events: Array<[string, number, string, Record<string, string>]> = [
    ['CHARGED', times.chargedMs, p.furnaceId, p.furnaceKey.headers],
    ['OUT_OF_FURNACE', times.outOfFurnaceMs, p.furnaceId, p.furnaceKey.headers],
    ['INTO_BATH', times.intoBathMs, p.bathId, p.bathKey.headers],
  ];
  if (plan.loggedMin === undefined) events.push(['OUT_OF_BATH', times.outOfBathMs, p.bathId, p.bathKey.headers]);
  for (const [kind, at, equipmentId, headers] of events) {
    expectStatus(await w.http.post(`/v1/batches/${batch.id}/events`, { kind, at: new Date(at).toISOString(), equipmentId }, headers), 201);
  }
  // Furnace: both zones ramp to 900 °C in 15 min and hold it.
  const zones: Array<{ channel: string; t: number; value: number }> = [];
  for (let ms = times.chargedMs - 20_000, i = 0; ms <= times.outOfFurnaceMs; ms += 10_000, i++) {
    const since = ms - times.chargedMs;
    const base = since < 0 ? 900 : since < 15 * MIN ? 700 + (200 * since) / (15 * MIN) : 900;
    zones.push({ channel: 'zone1', t: ms, value: round(base - 0.3 + 0.2 * Math.sin(i / 3), 2) }, { channel: 'zone2', t: ms, value: round(base + 0.4 + 0.2 * Math.cos(i / 3), 2) });
  }
  expectStatus(await w.http.post(`/v1/equipment/${p.furnaceId}/samples`, { samples: zones }, p.furnaceKey.headers), 200);
  // Agitator: running (or stopped) around the immersion.
  const rpm = plan.agitatorRpm ?? 900;
  const agitator = [-60, -30, 0, 30, 60, 90, 120].map((s) => ({ channel: 'agitator', t: times.intoBathMs + s * 1000, value: rpm }));
  expectStatus(await w.http.post(`/v1/equipment/${p.bathId}/samples`, { samples: agitator }, p.bathKey.headers), 200);
  if (options.bath !== false) await postBath(w, plan, bathReadings(plan));
  return { batchId: batch.id, times, code };
}

export async function postBath(w: World, plan: LoadPlan, samples: Array<{ channel: string; t: number; value: number }>): Promise<void> {
  for (let i = 0; i < samples.length; i += 5000) {
    expectStatus(await w.http.post(`/v1/equipment/${plan.plant.bathId}/samples`, { samples: samples.slice(i, i + 5000) }, plan.plant.bathKey.headers), 200);
  }
}

/** Waits until the worker stored a prediction of the batch that used readings up to `loggedUntilS` (and the phase). */
export async function waitForPrediction(w: World, batchId: string, expect: { phase: 'IN_BATH' | 'DONE'; loggedUntilS: number }, timeoutMs = 60_000): Promise<PredictionRow[]> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const rows = expectStatus(await w.http.get(`/v1/batches/${batchId}/predictions`, w.metallurgist.headers), 200).body.items as PredictionRow[];
    const latest = rows[0];
    if (latest && latest.phase === expect.phase && latest.result.bainite.loggedUntilS >= expect.loggedUntilS - 10) return rows;
    if (Date.now() > deadline) throw new Error(`no ${expect.phase} prediction up to ${expect.loggedUntilS} s for batch ${batchId}; latest: ${latest ? `${latest.phase} ${latest.result.bainite.loggedUntilS}` : 'none'}`);
    await new Promise((r) => setTimeout(r, 150));
  }
}

export interface PredictedDeviation {
  id: string;
  rule: string;
  severity: string;
  status: string;
  message: string;
  details: Record<string, unknown>;
}

/** The batch's deviations of the prediction rules (predicted-* and hold-too-short-predicted), through the API. */
export async function predictedDeviations(w: World, batchId: string): Promise<PredictedDeviation[]> {
  const items = expectStatus(await w.http.get(`/v1/deviations?batchId=${batchId}&limit=500`, w.metallurgist.headers), 200).body.items as PredictedDeviation[];
  return items.filter((d) => d.rule.startsWith('predicted-') || d.rule === 'hold-too-short-predicted').sort((a, b) => a.rule.localeCompare(b.rule));
}

/** Runs a load to its prediction; returns the latest prediction and the standing predicted deviations. */
export async function runLoad(w: World, plan: LoadPlan): Promise<{ batchId: string; times: LoadTimes; rows: PredictionRow[]; latest: PredictionRow; deviations: PredictedDeviation[] }> {
  const { batchId, times } = await postLoad(w, plan);
  const loggedUntilS = Math.floor(((plan.loggedMin ?? plan.holdMin) * 60) / 10) * 10;
  const rows = await waitForPrediction(w, batchId, { phase: plan.loggedMin === undefined ? 'DONE' : 'IN_BATH', loggedUntilS });
  const deviations = (await predictedDeviations(w, batchId)).filter((d) => d.status !== 'CLEARED');
  return { batchId, times, rows, latest: rows[0]!, deviations };
}

/** One line per verdict, for the test output. */
export function figures(label: string, row: PredictionRow): string {
  const v = row.result.verdicts.map((x) => `  ${x.criterion.padEnd(26)} ${x.verdict.padEnd(14)} ${fmt(x.p05)} / ${fmt(x.p50)} / ${fmt(x.p95)} ${x.unit ?? ''}  limit ${fmt(x.limit ?? null)}`);
  return [`${label}: bath ${row.result.t0.bathTempC} °C, overall ${row.result.overall}`, ...v].join('\n');
}

function fmt(x: number | null | undefined): string {
  return x === null || x === undefined ? '—' : String(x);
}

function round(x: number, digits: number): number {
  const k = 10 ** digits;
  return Math.round(x * k) / k;
}
