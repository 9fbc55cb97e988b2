/**
 * Fuzzing the people's and administrators' payloads (issue 7, item 4): sign-in, password change,
 * lines, equipment, channels, users, API keys, deviation actions (acknowledge, disposition, close),
 * and the query strings of the list endpoints; FUZZ_RUNS cases each (default 1,000), the same
 * checks as tests/fuzz/ingest-payloads.test.ts (no 5xx, 400 naming the field, nothing written by a
 * refused request, Object.prototype clean).
 *
 * Sign-in, password change and user creation only get cases the schema refuses: a valid one costs a
 * scrypt hash (about 0.3 s), and tests/api-auth.test.ts covers those paths.
 */
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import {
  BatchQuery,
  ChangePasswordRequest,
  CreateApiKeyRequest,
  CreateChannelRequest,
  CreateEquipmentRequest,
  CreateLineRequest,
  CreateUserRequest,
  DeviationAcknowledge,
  DeviationClose,
  DeviationDisposition,
  DeviationQuery,
  HeatQuery,
  LoginRequest,
} from '@ausline/contracts';
import { DeviationRepository } from '@ausline/db';
import { createBatch } from '../fixtures/austempering-plant.js';
import { startIngestWorld } from '../ingest-fixtures.js';
import { FUZZ_RUNS, FuzzClient, fuzzCases, judgeJson, judgeQuery, queryCases, runFuzz, WriteLog, type FuzzCase, type FuzzStats, type OracleVerdict } from './support.js';

const world = await startIngestWorld('fuzz-admin', { RATE_LIMIT_IP_PER_S: 0, RATE_LIMIT_KEY_PER_S: 0, LOGIN_MAX_FAILURES_PER_ACCOUNT: 0, LOGIN_MAX_FAILURES_PER_IP: 0 } as object);
const client = new FuzzClient(world.api.url);
afterAll(() => client.close());
const prisma = world.db.prisma;

// Deviations to act on: one per action, opened the way the worker opens them.
const repository = new DeviationRepository(prisma);
async function openDeviation(rule: string): Promise<string> {
  const batch = await createBatch(prisma, world.plant);
  const change = await repository.openOrRefresh(
    { rule, severity: 'MAJOR', dedupKey: `${batch.id}:${rule}`, channelId: null, message: `${rule} on ${batch.code}`, details: {} },
    { batchId: batch.id, lineId: batch.lineId, productSpecId: world.plant.specId },
  );
  return change!.deviationId;
}
const toAcknowledge = await openDeviation('bath-band-excursion');
const toDisposition = await openDeviation('transfer-time');
const toClose = await openDeviation('hold-min');
const writes = await WriteLog.install(world.db.pool);

const TIMEOUT_MS = 600_000;
const plantCode = fc.stringMatching(/^[A-Z][A-Z0-9-]{2,10}$/);

function report(name: string, stats: FuzzStats): void {
  console.log(`${name}: ${stats.cases} cases in ${Math.round(stats.ms)} ms (generating ${Math.round(stats.generateMs)} ms), replies ${JSON.stringify(stats.byStatus)}`);
  if (process.env.FUZZ_ONLY) return;
  expect(stats.cases).toBeGreaterThanOrEqual(FUZZ_RUNS);
  expect(stats.rejected / stats.cases, `${name}: share refused`).toBeGreaterThan(0.6);
}

/** Only cases the schema refuses (see the file comment). */
function refusedOnly(cases: fc.Arbitrary<FuzzCase>, judge: (c: FuzzCase) => OracleVerdict): fc.Arbitrary<FuzzCase> {
  return cases.filter((c) => !judge(c).valid);
}

describe('fuzzing administration payloads', () => {
  it('POST /v1/auth/login', { timeout: TIMEOUT_MS }, async () => {
    const judge = (c: FuzzCase) => judgeJson(LoginRequest, c.body);
    const valid = fc.record({ email: fc.constantFrom(world.admin.email, 'nobody@plant.test'), password: fc.constantFrom('wrong-password-123', 'x') });
    report('login', await runFuzz({ name: 'POST /v1/auth/login', client, writes, method: 'POST', path: '/v1/auth/login', headers: {}, cases: refusedOnly(fuzzCases(valid), judge), judge }));
  });

  it('POST /v1/me/password', { timeout: TIMEOUT_MS }, async () => {
    const judge = (c: FuzzCase) => judgeJson(ChangePasswordRequest, c.body);
    const valid = fc.record({ currentPassword: fc.constant('test-password-0123456789'), newPassword: fc.constant('a-new-password-4567') });
    report('password', await runFuzz({ name: 'POST /v1/me/password', client, writes, method: 'POST', path: '/v1/me/password', headers: world.quality.headers, cases: refusedOnly(fuzzCases(valid), judge), judge }));
  });

  it('POST /v1/lines', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record(
      {
        code: plantCode,
        name: fc.constantFrom('Austemper line 2', 'Salt line'),
        timeZone: fc.constantFrom('Europe/Berlin', 'UTC', 'America/Chicago'),
        hCoefficientByAgitation: fc.record({ none: fc.integer({ min: 500, max: 1000 }), mild: fc.integer({ min: 1000, max: 2000 }) }),
      },
      { requiredKeys: ['code', 'name', 'timeZone'] },
    );
    report('lines', await runFuzz({ name: 'POST /v1/lines', client, writes, method: 'POST', path: '/v1/lines', headers: world.admin.headers, cases: fuzzCases(valid), judge: (c) => judgeJson(CreateLineRequest, c.body) }));
  });

  it('POST /v1/lines/:id/equipment', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record({ kind: fc.constantFrom('FURNACE', 'BATH'), code: plantCode, name: fc.constantFrom('Bath 2', 'Furnace 3') });
    report('equipment', await runFuzz({ name: 'POST /v1/lines/:id/equipment', client, writes, method: 'POST', path: `/v1/lines/${world.plant.lineId}/equipment`, headers: world.admin.headers, cases: fuzzCases(valid), judge: (c) => judgeJson(CreateEquipmentRequest, c.body) }));
  });

  it('POST /v1/equipment/:id/channels', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record({ code: fc.stringMatching(/^tc[0-9]{1,3}$/), quantity: fc.constantFrom('TEMPERATURE_C', 'AGITATION_RPM', 'LEVEL_MM'), role: fc.constantFrom('BATH_TC', 'BATH_LEVEL', 'OTHER') });
    report('channels', await runFuzz({ name: 'POST /v1/equipment/:id/channels', client, writes, method: 'POST', path: `/v1/equipment/${world.plant.bathId}/channels`, headers: world.admin.headers, cases: fuzzCases(valid), judge: (c) => judgeJson(CreateChannelRequest, c.body) }));
  });

  it('POST /v1/users', { timeout: TIMEOUT_MS }, async () => {
    const judge = (c: FuzzCase) => judgeJson(CreateUserRequest, c.body);
    const valid = fc.record(
      { email: fc.stringMatching(/^[a-z]{3,8}$/).map((s) => `${s}@plant.test`), displayName: fc.constantFrom('A. Quality', 'M. Etallurgist'), roles: fc.subarray(['METALLURGIST', 'QUALITY', 'ADMIN'], { minLength: 1 }), password: fc.constant('long-enough-password') },
      { requiredKeys: ['email', 'displayName', 'roles'] },
    );
    report('users', await runFuzz({ name: 'POST /v1/users', client, writes, method: 'POST', path: '/v1/users', headers: world.admin.headers, cases: refusedOnly(fuzzCases(valid), judge), judge }));
  });

  it('POST /v1/api-keys', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.oneof(
      fc.record({ label: fc.stringMatching(/^Bath controller [0-9]{1,4}$/), scope: fc.constant('EQUIPMENT'), equipmentIds: fc.constant([world.plant.bathId]) }),
      fc.record({ label: fc.stringMatching(/^Lab [0-9]{1,4}$/), scope: fc.constant('LAB') }),
    );
    report('api keys', await runFuzz({ name: 'POST /v1/api-keys', client, writes, method: 'POST', path: '/v1/api-keys', headers: world.admin.headers, cases: fuzzCases(valid), judge: (c) => judgeJson(CreateApiKeyRequest, c.body) }));
  });

  it('POST /v1/deviations/:id/acknowledge', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record({ reason: fc.constantFrom('seen on the board', 'checking the thermocouple') }, { requiredKeys: [] });
    report('acknowledge', await runFuzz({ name: 'POST /v1/deviations/:id/acknowledge', client, writes, method: 'POST', path: `/v1/deviations/${toAcknowledge}/acknowledge`, headers: world.metallurgist.headers, cases: fuzzCases(valid), judge: (c) => judgeJson(DeviationAcknowledge, c.body) }));
  });

  it('POST /v1/deviations/:id/disposition', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.oneof(
      fc.record({ disposition: fc.constantFrom('USE_AS_IS', 'RETREAT', 'SCRAP'), reason: fc.constantFrom('hardness checked on 5 parts', 'retreat the load') }),
      fc.record({ disposition: fc.constant('CONCESSION'), reason: fc.constant('customer accepted'), dispositionRef: fc.constantFrom('PERMIT-2026-17', 'C-88') }),
    );
    report('disposition', await runFuzz({ name: 'POST /v1/deviations/:id/disposition', client, writes, method: 'POST', path: `/v1/deviations/${toDisposition}/disposition`, headers: world.quality.headers, cases: fuzzCases(valid), judge: (c) => judgeJson(DeviationDisposition, c.body) }));
  });

  it('POST /v1/deviations/:id/close', { timeout: TIMEOUT_MS }, async () => {
    const valid = fc.record({ reason: fc.constantFrom('parts retested, conforming', 'closed after review') });
    report('close', await runFuzz({ name: 'POST /v1/deviations/:id/close', client, writes, method: 'POST', path: `/v1/deviations/${toClose}/close`, headers: world.quality.headers, cases: fuzzCases(valid), judge: (c) => judgeJson(DeviationClose, c.body) }));
  });
});

describe('fuzzing list query strings', () => {
  const recent = fc.integer({ min: 1, max: 30 }).map((d) => new Date(Date.now() - d * 86_400_000).toISOString());
  const lists = [
    {
      name: 'GET /v1/deviations',
      path: '/v1/deviations',
      schema: DeviationQuery,
      valid: fc.record({ from: recent, status: fc.constantFrom('OPEN', 'OPEN,ACKNOWLEDGED'), severity: fc.constantFrom('MAJOR', 'MINOR,CRITICAL'), limit: fc.constantFrom('10', '500'), lineId: fc.constant(world.plant.lineId) }, { requiredKeys: [] }),
    },
    {
      name: 'GET /v1/batches',
      path: '/v1/batches',
      schema: BatchQuery,
      valid: fc.record({ status: fc.constantFrom('PLANNED', 'IN_BATH,DONE'), code: fc.constantFrom('LOAD-1', 'X'), stale: fc.constantFrom('true', 'false'), to: recent, limit: fc.constantFrom('1', '50') }, { requiredKeys: [] }),
    },
    {
      name: 'GET /v1/heats',
      path: '/v1/heats',
      schema: HeatQuery,
      valid: fc.record({ heatNumber: fc.constantFrom('H-1', 'H-24-0117'), material: fc.constantFrom('STEEL', 'DUCTILE_IRON'), limit: fc.constantFrom('5', '100') }, { requiredKeys: [] }),
    },
  ];
  for (const list of lists) {
    it(list.name, { timeout: TIMEOUT_MS }, async () => {
      const stats = await runFuzz({
        name: list.name,
        client,
        writes,
        method: 'GET',
        path: list.path,
        headers: world.metallurgist.headers,
        cases: queryCases(list.path, list.valid as fc.Arbitrary<Record<string, string>>),
        judge: (c) => judgeQuery(list.schema, c.path!),
      });
      console.log(`${list.name}: ${stats.cases} cases in ${Math.round(stats.ms)} ms (generating ${Math.round(stats.generateMs)} ms), replies ${JSON.stringify(stats.byStatus)}`);
      if (!process.env.FUZZ_ONLY) expect(stats.cases).toBeGreaterThanOrEqual(FUZZ_RUNS);
    });
  }
});
