/**
 * Fuzzing the people's and administrators' payloads (issue 7, item 4): sign-in, password change,
 * lines, equipment, channels, users, API keys; FUZZ_RUNS cases each (default 1,000), the same checks
 * as tests/fuzz/ingest-payloads.test.ts (no 5xx, 400 naming the field, nothing written by a refused
 * request, Object.prototype clean). Deviation actions and list queries: deviation-actions.test.ts.
 *
 * Sign-in, password change and user creation only get cases the schema refuses: a valid one costs a
 * scrypt hash (about 0.3 s), and tests/api-auth.test.ts covers those paths.
 */
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { ChangePasswordRequest, CreateApiKeyRequest, CreateChannelRequest, CreateEquipmentRequest, CreateLineRequest, CreateUserRequest, LoginRequest } from '@ausline/contracts';
import { startIngestWorld } from '../ingest-fixtures.js';
import { FUZZ_RUNS, FuzzClient, fuzzCases, judgeJson, runFuzz, WriteLog, type FuzzCase, type FuzzStats, type OracleVerdict } from './support.js';

const world = await startIngestWorld('fuzz-admin', { RATE_LIMIT_IP_PER_S: 0, RATE_LIMIT_KEY_PER_S: 0, LOGIN_MAX_FAILURES_PER_ACCOUNT: 0, LOGIN_MAX_FAILURES_PER_IP: 0 } as object);
const client = new FuzzClient(world.api.url);
afterAll(() => client.close());

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

});
