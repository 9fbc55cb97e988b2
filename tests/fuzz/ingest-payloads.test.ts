/**
 * Fuzzing the ingest payloads (issue 7, item 4): heats, product specs and their versions, batches,
 * load events, lab results and samples, FUZZ_RUNS cases each (default 1,000) against the real API on
 * its own database. Per case: no 5xx; schema-invalid input refused with 400 naming the field; times
 * before 2000 / after 2100 / not a date refused; a refused request committed no row (row triggers,
 * see support.ts); Object.prototype untouched. The heat CSV import has its own file.
 */
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { BatchCreate, HeatInput, LabResultInput, LoadEventInput, ProductSpecCreate, ProductSpecVersionInput, SamplesPost } from '@ausline/contracts';
import { adiWindow } from '../fixtures/austempering-plant.js';
import { createBatchViaApi, startIngestWorld } from '../ingest-fixtures.js';
import { FUZZ_RUNS, FuzzClient, fuzzCases, judgeJson, runFuzz, WriteLog, type FuzzStats, type PathPart } from './support.js';

const noLimits = { RATE_LIMIT_IP_PER_S: 0, RATE_LIMIT_KEY_PER_S: 0 } as object;
const world = await startIngestWorld('fuzz-ingest', noLimits);
const client = new FuzzClient(world.api.url);
afterAll(() => client.close());
const writes = await WriteLog.install(world.db.pool);
const heat = await world.db.prisma.heat.findUniqueOrThrow({ where: { id: world.plant.heatId } });
const batch = await createBatchViaApi(world);

const TIMEOUT_MS = 600_000;
const timeKey = (path: readonly PathPart[]) => ['t', 'at', 'measuredAt'].includes(String(path[path.length - 1]));
/** Instants within the last two days (device time in the past is fine: store and forward). */
const recentTime = fc
  .integer({ min: 60_000, max: 2 * 86_400_000 })
  .chain((agoMs) => fc.constantFrom(new Date(Date.now() - agoMs).toISOString(), Date.now() - agoMs, new Date(Date.now() - agoMs).toISOString().replace('Z', '+02:00')));
const code = (prefix: string) => fc.stringMatching(/^[A-Z0-9]{4,10}$/).map((s) => `${prefix}-${s}`);
const wtPct = (min: number, max: number) => fc.double({ min, max, noNaN: true, noDefaultInfinity: true });

function report(name: string, stats: FuzzStats): void {
  console.log(`${name}: ${stats.cases} cases in ${Math.round(stats.ms)} ms (generating ${Math.round(stats.generateMs)} ms), replies ${JSON.stringify(stats.byStatus)}`);
  // Most cases must be refusals, or the generator is not exercising the validation.
  if (process.env.FUZZ_ONLY) return;
  expect(stats.cases).toBeGreaterThanOrEqual(FUZZ_RUNS);
  expect(stats.rejected / stats.cases, `${name}: share refused ${JSON.stringify(stats.byStatus)}`).toBeGreaterThan(0.6);
}

describe('fuzzing ingest payloads', () => {
  it('POST /v1/heats', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record(
      {
        heatNumber: code('H'),
        material: fc.constantFrom('STEEL', 'DUCTILE_IRON'),
        grade: fc.constantFrom('100CrMnSi6-4', 'EN-GJS-1050-6', 'C60'),
        chemistryWtPct: fc.record({ C: wtPct(0.1, 3.9), Si: wtPct(0, 3), Mn: wtPct(0, 2), Mg: wtPct(0, 0.1) }, { requiredKeys: ['C'] }),
        source: fc.constantFrom('mill-certificate', 'lab'),
      },
      { requiredKeys: ['heatNumber', 'material', 'chemistryWtPct'] },
    );
    const stats = await runFuzz({
      name: 'POST /v1/heats',
      client,
      writes,
      method: 'POST',
      path: '/v1/heats',
      headers: world.labKey.headers,
      cases: fuzzCases(valid),
      judge: (c) => judgeJson(HeatInput, c.body),
      idempotencyKeys: true,
    });
    report('heats', stats);
  });

  it('POST /v1/specs', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record(
      { code: code('P'), name: fc.constantFrom('ADI knuckle', 'Bainitic bearing ring'), material: fc.constantFrom('STEEL', 'DUCTILE_IRON'), description: fc.string({ maxLength: 40 }) },
      { requiredKeys: ['code', 'name', 'material'] },
    );
    const stats = await runFuzz({
      name: 'POST /v1/specs',
      client,
      writes,
      method: 'POST',
      path: '/v1/specs',
      headers: world.quality.headers,
      cases: fuzzCases(valid),
      judge: (c) => judgeJson(ProductSpecCreate, c.body),
    });
    report('specs', stats);
  });

  it('POST /v1/specs/:id/versions', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record({
      chemistryLimits: fc.record({ C: fc.record({ minWtPct: wtPct(3.2, 3.5), maxWtPct: wtPct(3.6, 3.9) }), Mn: fc.record({ maxWtPct: wtPct(0.2, 0.5) }) }, { requiredKeys: ['C'] }),
      processWindow: fc.constant(adiWindow),
      acceptanceCriteria: fc.record(
        {
          hardness: fc.record({ scale: fc.constant('HBW'), min: fc.integer({ min: 300, max: 340 }), max: fc.integer({ min: 400, max: 450 }) }),
          minBainiteFraction: wtPct(0.5, 0.9),
          minImpactJ: fc.integer({ min: 20, max: 100 }),
        },
        { requiredKeys: [] },
      ),
    });
    const stats = await runFuzz({
      name: 'POST /v1/specs/:id/versions',
      client,
      writes,
      method: 'POST',
      path: `/v1/specs/${world.plant.specId}/versions`,
      headers: world.quality.headers,
      cases: fuzzCases(valid),
      judge: (c) => judgeJson(ProductSpecVersionInput, c.body),
      idempotencyKeys: true,
    });
    report('spec versions', stats);
  });

  it('POST /v1/batches', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record(
      {
        code: code('LOAD'),
        lineId: fc.constant(world.plant.lineId),
        heatNumber: fc.constant(heat.heatNumber),
        productSpecId: fc.constant(world.plant.specId),
        partCount: fc.integer({ min: 1, max: 500 }),
        weightKg: wtPct(1, 2000),
        sectionShape: fc.constantFrom('PLATE', 'CYLINDER', 'SQUARE_BAR'),
        sectionSizeMm: wtPct(2, 150),
        scheduledHoldMin: fc.integer({ min: 30, max: 240 }),
      },
      { requiredKeys: ['code', 'lineId', 'heatNumber', 'productSpecId', 'partCount', 'weightKg', 'sectionShape', 'sectionSizeMm'] },
    );
    const stats = await runFuzz({
      name: 'POST /v1/batches',
      client,
      writes,
      method: 'POST',
      path: '/v1/batches',
      headers: world.admin.headers,
      cases: fuzzCases(valid),
      judge: (c) => judgeJson(BatchCreate, c.body),
      idempotencyKeys: true,
    });
    report('batches', stats);
  });

  it('POST /v1/batches/:id/events', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record({ kind: fc.constantFrom('CHARGED', 'OUT_OF_FURNACE'), at: recentTime, equipmentId: fc.constant(world.plant.furnaceId) });
    const stats = await runFuzz({
      name: 'POST /v1/batches/:id/events',
      client,
      writes,
      method: 'POST',
      path: `/v1/batches/${batch.id}/events`,
      headers: world.furnaceKey.headers,
      cases: fuzzCases(valid, { isTimePath: timeKey, rejectFutureTimes: true }),
      judge: (c) => judgeJson(LoadEventInput, c.body),
      idempotencyKeys: true,
    });
    report('load events', stats);
  });

  it('POST /v1/batches/:id/lab-results', { timeout: TIMEOUT_MS }, async () => {
    const common = { externalRef: code('LAB'), measuredAt: recentTime, location: fc.constantFrom('surface', 'core'), note: fc.string({ maxLength: 30 }) };
    const hardness = fc.record({ kind: fc.constant('HARDNESS'), scale: fc.constant('HBW'), testStandard: fc.constantFrom('ISO 6506-1', 'ASTM E10'), readings: fc.array(fc.integer({ min: 300, max: 450 }), { minLength: 1, maxLength: 5 }), ...common }, { requiredKeys: ['kind', 'scale', 'testStandard', 'readings', 'externalRef'] });
    const austenite = fc.record({ kind: fc.constant('RETAINED_AUSTENITE'), method: fc.constant('XRD'), testStandard: fc.constant('ASTM E975'), volumePct: wtPct(5, 40), ...common }, { requiredKeys: ['kind', 'method', 'testStandard', 'volumePct', 'externalRef'] });
    const tensile = fc.record({ kind: fc.constant('TENSILE'), testStandard: fc.constant('ISO 6892-1'), rmMPa: fc.integer({ min: 1000, max: 1400 }), rp02MPa: fc.integer({ min: 600, max: 990 }), elongationPct: wtPct(1, 12), ...common }, { requiredKeys: ['kind', 'testStandard', 'rmMPa', 'rp02MPa', 'elongationPct', 'externalRef'] });
    const impact = fc.record({ kind: fc.constant('IMPACT'), testStandard: fc.constant('ISO 148-1'), notch: fc.constantFrom('V', 'UNNOTCHED'), energiesJ: fc.array(wtPct(10, 150), { minLength: 1, maxLength: 3 }), temperatureC: fc.constantFrom(23, -20), ...common }, { requiredKeys: ['kind', 'testStandard', 'notch', 'energiesJ', 'temperatureC', 'externalRef'] });
    const stats = await runFuzz({
      name: 'POST /v1/batches/:id/lab-results',
      client,
      writes,
      method: 'POST',
      path: `/v1/batches/${batch.id}/lab-results`,
      headers: world.labKey.headers,
      // Future measuredAt is not refused yet (noted for F4 in coord/requests.md); far times are.
      cases: fuzzCases(fc.oneof(hardness, austenite, tensile, impact), { isTimePath: timeKey }),
      judge: (c) => judgeJson(LabResultInput, c.body),
      idempotencyKeys: true,
    });
    report('lab results', stats);
  });

  it('POST /v1/equipment/:id/samples', { timeout: TIMEOUT_MS }, async () => {
    const sample = fc.record({ channel: fc.constantFrom('tc1', 'tc2'), t: recentTime, value: wtPct(340, 400) });
    const valid = fc.record({ samples: fc.array(sample, { minLength: 1, maxLength: 4 }) });
    const stats = await runFuzz({
      name: 'POST /v1/equipment/:id/samples',
      client,
      writes,
      method: 'POST',
      path: `/v1/equipment/${world.plant.bathId}/samples`,
      headers: world.bathKey.headers,
      cases: fuzzCases(valid, { isTimePath: timeKey, rejectFutureTimes: true }),
      judge: (c) => judgeJson(SamplesPost, c.body),
      idempotencyKeys: true,
    });
    report('samples', stats);
  });
});
