/**
 * An invented spring-clip austempering plant, set up through the HTTP API the way its people and
 * machines would: the admin (created with the create-admin command's function) builds two lines, adds
 * users and keys; quality writes and approves the product spec; the lab posts the heat; the furnace and
 * bath controllers post load events and logs with their own keys.
 *
 * The recipe sits inside practice.md §2.2 for spring steels (austenitize 830–900 °C, salt 260–370 °C,
 * 15–60 min [M]); the chemistry is an invented heat near 54SiCr6 (from memory: C 0.51–0.59, Si 1.20–1.60,
 * Mn 0.50–0.80, Cr 0.50–0.80 wt%). All numbers are demo data.
 */
import { createAdmin } from '../../apps/api/src/cli/create-admin.js';
import { apiKey, bearer, type Http, type Stack } from './support.js';

export const PASSWORD = 'shift-password-0123';

export const springWindow = {
  austenitize: { minTempC: 860, maxTempC: 890, minMinutes: 30, maxMinutes: 90 },
  maxTransferS: 15,
  bath: { minTempC: 290, maxTempC: 310, maxExcursionS: 120, minHoldMin: 30, maxHoldMin: 60 },
  maxChannelGapS: 60,
  flatline: { minDurationS: 600, epsilonC: 0.05 },
  plausible: { minTempC: 0, maxTempC: 1200, maxRateCPerS: 50 },
  twinTolerance: { maxDiffC: 8, minDurationS: 60 },
};

export const springCriteria = {
  hardness: { scale: 'HV', min: 460, max: 545 },
  minBainiteFraction: 0.55,
  maxFreshMartensiteFraction: 0.05,
  maxBlockyAusteniteFraction: 0.1,
  minFilmToBlockRatio: 1.5,
  minMsMarginC: 20,
  minBsMarginC: 20,
  minSiPlusAlWtPct: 1.2,
};

export const heatChemistry = { C: 0.55, Si: 1.42, Mn: 0.68, Cr: 0.66, P: 0.012, S: 0.008 };

export interface Plant {
  admin: Record<string, string>;
  quality: Record<string, string>;
  metallurgist: Record<string, string>;
  users: { quality: string; metallurgist: string; admin: string };
  lines: Array<{ id: string; code: string; furnaceId: string; bathId: string }>;
  furnaceKeys: Record<string, string>[];
  bathKeys: Record<string, string>[];
  lab: Record<string, string>;
  specId: string;
  heatId: string;
}

/** Small, deterministic wiggle: a live thermocouple never reads flat (the flat-line rule would object). */
export const wiggle = (i: number, amplitudeC: number): number => amplitudeC * Math.sin(i / 5);

export async function setUpPlant(stack: Stack): Promise<Plant> {
  const { http, db } = stack;
  const created = await createAdmin(db.prisma, { email: 'admin@clips.test', displayName: 'A. Admin' });
  if (!created.ok) throw new Error(created.reason);
  const admin = await signIn(http, 'admin@clips.test', created.oneTimePassword);

  const lines: Plant['lines'] = [];
  const furnaceKeys: Record<string, string>[] = [];
  const bathKeys: Record<string, string>[] = [];
  for (const n of [1, 2]) {
    const line = await http.must('/v1/lines', { code: `AUS-${n}`, name: `Austemper line ${n}`, timeZone: 'Europe/Berlin' }, admin);
    const furnace = await http.must(`/v1/lines/${line.id}/equipment`, { kind: 'FURNACE', code: `AUS-${n}-F`, name: `Furnace ${n}` }, admin);
    const bath = await http.must(`/v1/lines/${line.id}/equipment`, { kind: 'BATH', code: `AUS-${n}-B`, name: `Salt bath ${n}` }, admin);
    for (const code of ['zone1', 'zone2']) await http.must(`/v1/equipment/${furnace.id}/channels`, { code, quantity: 'TEMPERATURE_C', role: 'FURNACE_ZONE' }, admin);
    for (const code of ['tc1', 'tc2']) await http.must(`/v1/equipment/${bath.id}/channels`, { code, quantity: 'TEMPERATURE_C', role: 'BATH_TC' }, admin);
    lines.push({ id: line.id, code: line.code, furnaceId: furnace.id, bathId: bath.id });
    furnaceKeys.push(apiKey((await http.must('/v1/api-keys', { label: `furnace ${n} PLC`, scope: 'EQUIPMENT', equipmentIds: [furnace.id] }, admin)).key));
    bathKeys.push(apiKey((await http.must('/v1/api-keys', { label: `bath ${n} PLC`, scope: 'EQUIPMENT', equipmentIds: [bath.id] }, admin)).key));
  }
  const lab = apiKey((await http.must('/v1/api-keys', { label: 'lab LIMS', scope: 'LAB' }, admin)).key);
  await http.must('/v1/users', { email: 'quality@clips.test', displayName: 'Q. Ramirez', roles: ['QUALITY'], password: PASSWORD }, admin);
  await http.must('/v1/users', { email: 'metallurgist@clips.test', displayName: 'M. Okafor', roles: ['METALLURGIST'], password: PASSWORD }, admin);
  const quality = await signIn(http, 'quality@clips.test', PASSWORD);
  const metallurgist = await signIn(http, 'metallurgist@clips.test', PASSWORD);

  const spec = (await http.must('/v1/specs', { code: 'SPR-55SC', name: 'Spring clip, 55SiCr', material: 'STEEL', description: 'Bainitic spring clip, demo product' }, quality)).spec;
  const version = await http.must(`/v1/specs/${spec.id}/versions`, {
    chemistryLimits: { C: { minWtPct: 0.51, maxWtPct: 0.59 }, Si: { minWtPct: 1.2, maxWtPct: 1.6 }, Mn: { minWtPct: 0.5, maxWtPct: 0.8 }, Cr: { minWtPct: 0.5, maxWtPct: 0.8 }, P: { maxWtPct: 0.025 }, S: { maxWtPct: 0.025 } },
    processWindow: springWindow,
    acceptanceCriteria: springCriteria,
  }, quality);
  await http.must(`/v1/specs/${spec.id}/versions/${version.version}/approve`, {}, quality);
  const heat = (await http.must('/v1/heats', { heatNumber: 'H-26-0311', material: 'STEEL', grade: '54SiCr6', chemistryWtPct: heatChemistry, source: 'mill-certificate' }, lab)).heat;

  return {
    admin,
    quality,
    metallurgist,
    users: { quality: 'quality@clips.test', metallurgist: 'metallurgist@clips.test', admin: 'admin@clips.test' },
    lines,
    furnaceKeys,
    bathKeys,
    lab,
    specId: spec.id,
    heatId: heat.id,
  };
}

async function signIn(http: Http, email: string, password: string): Promise<Record<string, string>> {
  const reply = await http.post('/v1/auth/login', { email, password });
  if (reply.status !== 200) throw new Error(`login ${email}: ${reply.status} ${JSON.stringify(reply.body)}`);
  return bearer(reply.body.token);
}

export interface LoadTimes {
  chargedMs: number;
  outOfFurnaceMs?: number;
  intoBathMs?: number;
  outOfBathMs?: number;
}

/** Creates a load and posts its events (furnace key for furnace steps, bath key for bath steps). */
export async function createLoad(stack: Stack, plant: Plant, lineIndex: number, code: string, times: LoadTimes, scheduledHoldMin = 45): Promise<string> {
  const { http } = stack;
  const line = plant.lines[lineIndex]!;
  const batch = (await http.must('/v1/batches', { code, lineId: line.id, heatId: plant.heatId, productSpecId: plant.specId, partCount: 1200, weightKg: 310, sectionShape: 'PLATE', sectionSizeMm: 4, scheduledHoldMin }, plant.admin)).batch;
  const events: Array<[string, number | undefined, string, Record<string, string>]> = [
    ['CHARGED', times.chargedMs, line.furnaceId, plant.furnaceKeys[lineIndex]!],
    ['OUT_OF_FURNACE', times.outOfFurnaceMs, line.furnaceId, plant.furnaceKeys[lineIndex]!],
    ['INTO_BATH', times.intoBathMs, line.bathId, plant.bathKeys[lineIndex]!],
    ['OUT_OF_BATH', times.outOfBathMs, line.bathId, plant.bathKeys[lineIndex]!],
  ];
  for (const [kind, at, equipmentId, key] of events) {
    if (at === undefined) continue;
    await http.must(`/v1/batches/${batch.id}/events`, { kind, at: new Date(at).toISOString(), equipmentId }, key);
  }
  return batch.id;
}

/** Posts samples in chunks of 10,000 (the API's per-request maximum). */
export async function postSamples(stack: Stack, equipmentId: string, key: Record<string, string>, samples: Array<{ channel: string; t: number; value: number }>): Promise<void> {
  for (let i = 0; i < samples.length; i += 10_000) {
    const chunk = samples.slice(i, i + 10_000).map((s) => ({ channel: s.channel, t: new Date(s.t).toISOString(), value: Math.round(s.value * 100) / 100 }));
    await stack.http.must(`/v1/equipment/${equipmentId}/samples`, { samples: chunk }, key, [200]);
  }
}

/** Furnace zones: heat-up from 620 °C to 875 °C over 20 min, then 875 ± 2 °C, every `stepMs`. */
export function furnaceLog(fromMs: number, toMs: number, stepMs = 10_000): Array<{ channel: string; t: number; value: number }> {
  const out = [];
  for (let t = fromMs, i = 0; t <= toMs; t += stepMs, i++) {
    const rise = Math.min(1, (t - fromMs) / (20 * 60_000));
    const base = 620 + (875 - 620) * (1 - (1 - rise) ** 2);
    out.push({ channel: 'zone1', t, value: base + wiggle(i, 2) }, { channel: 'zone2', t, value: base - 1 + wiggle(i + 3, 2) });
  }
  return out;
}

/** Bath thermocouples: 300 ± 1.5 °C, with an optional excursion to `excursion.valueC` in [fromMs, toMs). */
export function bathLog(fromMs: number, toMs: number, stepMs = 5_000, excursion?: { fromMs: number; toMs: number; valueC: number }): Array<{ channel: string; t: number; value: number }> {
  const out = [];
  for (let t = fromMs, i = 0; t <= toMs; t += stepMs, i++) {
    const inExcursion = excursion !== undefined && t >= excursion.fromMs && t < excursion.toMs;
    const base = inExcursion ? excursion!.valueC : 300;
    out.push({ channel: 'tc1', t, value: base + wiggle(i, 1.5) }, { channel: 'tc2', t, value: base - 0.6 + wiggle(i + 2, 1.5) });
  }
  return out;
}
