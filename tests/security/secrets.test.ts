/**
 * Secrets never logged, never stored in the clear (issue 7, item 5). The API runs at LOG_LEVEL debug
 * with every JSON log line captured (and stdout/stderr teed, for anything that bypasses the logger);
 * then people sign in (right and wrong passwords), an admin creates users (chosen and one-time
 * passwords) and API keys, controllers use the keys (both headers, and a wrong secret), a browser opens
 * the event stream with ?token=, someone changes a password and signs out. No log line, and no row of
 * any table, may contain a password, a session token, a key or its secret (plain or URL-encoded).
 */
import { afterAll, describe, expect, it } from 'vitest';
import { loadConfig } from '@ausline/contracts';
import { createApiApp } from '../../apps/api/src/create-api-app.js';
import { JsonLogger } from '../../apps/api/src/http/logger.js';
import { createTestPlant, createUserWithSession, TEST_PASSWORD } from '../../apps/api/test/support/principals.js';
import { createTestDatabase } from '../support/database.js';
import { testAppEnv } from '../support/env.js';
import { testQueuePrefix } from '../support/redis.js';
import { FuzzClient } from '../fuzz/support.js';

const db = await createTestDatabase();
const logLines: string[] = [];
const api = await createApiApp(loadConfig(testAppEnv({ databaseUrl: db.url, queuePrefix: testQueuePrefix('secrets') }, { LOG_LEVEL: 'debug' })), {
  logger: new JsonLogger('debug', (line) => logLines.push(line)),
});
afterAll(() => api.close());
const client = new FuzzClient(api.url);
afterAll(() => client.close());
const plant = await createTestPlant(api.app);
const admin = await createUserWithSession(api.app, { roles: ['ADMIN'] });

function post(path: string, body: unknown, headers: Record<string, string> = {}) {
  return client.request('POST', path, { headers: { 'content-type': 'application/json', ...headers }, body: JSON.stringify(body) });
}

/** Everything written to stdout/stderr while `run` runs, besides the logger's own lines. */
async function teeOutput(run: () => Promise<void>): Promise<string[]> {
  const captured: string[] = [];
  const out = process.stdout.write.bind(process.stdout);
  const err = process.stderr.write.bind(process.stderr);
  const tee = (write: typeof out) => ((chunk: unknown, ...rest: unknown[]) => {
    captured.push(String(chunk));
    return (write as (...args: unknown[]) => boolean)(chunk, ...rest);
  }) as typeof out;
  process.stdout.write = tee(out);
  process.stderr.write = tee(err);
  try {
    await run();
  } finally {
    process.stdout.write = out;
    process.stderr.write = err;
  }
  return captured;
}

describe('secrets in logs and tables', () => {
  it('no password, session token, API key or key secret appears in any log line or any row', { timeout: 120_000 }, async () => {
    const secrets: Record<string, string> = {};
    let keyPrefix = '';
    const output = await teeOutput(async () => {
      // Sign-in: the admin's real password, and a wrong one.
      const login = await post('/v1/auth/login', { email: admin.email, password: TEST_PASSWORD });
      expect(login.status).toBe(200);
      secrets['login password'] = TEST_PASSWORD;
      secrets['session token'] = login.json.token;
      const wrongPassword = 'Wrong-Password-Guess-4471';
      expect((await post('/v1/auth/login', { email: admin.email, password: wrongPassword })).status).toBe(401);
      secrets['wrong password'] = wrongPassword;
      const bearer = { authorization: `Bearer ${login.json.token}` };

      // Users: a chosen password, and a one-time password made by the server.
      const chosen = 'Chosen-Password-9921-abc';
      expect((await post('/v1/users', { email: 'q1@plant.test', displayName: 'Q One', roles: ['QUALITY'], password: chosen }, bearer)).status).toBe(201);
      secrets['chosen password'] = chosen;
      const oneTime = await post('/v1/users', { email: 'm1@plant.test', displayName: 'M One', roles: ['METALLURGIST'] }, bearer);
      expect(oneTime.status).toBe(201);
      secrets['one-time password'] = oneTime.json.oneTimePassword;
      const firstLogin = await post('/v1/auth/login', { email: 'm1@plant.test', password: oneTime.json.oneTimePassword });
      expect(firstLogin.status).toBe(200);
      secrets['second session token'] = firstLogin.json.token;

      // Password change (current and new), then sign-out.
      const newPassword = 'Brand-New-Password-5512';
      expect((await post('/v1/me/password', { currentPassword: oneTime.json.oneTimePassword, newPassword }, { authorization: `Bearer ${firstLogin.json.token}` })).status).toBe(204);
      secrets['new password'] = newPassword;

      // API keys: created, used in both headers, a wrong secret tried, revoked and tried again.
      const created = await post('/v1/api-keys', { label: 'bath 2 controller', scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id] }, bearer);
      expect(created.status).toBe(201);
      const key: string = created.json.key;
      secrets['API key'] = key;
      secrets['API key secret'] = key.split('.')[1]!;
      keyPrefix = key.split('.')[0]!;
      const channels = `/v1/equipment/${plant.bath2Id}/channels`;
      expect((await client.request('GET', channels, { headers: { authorization: `ApiKey ${key}` } })).status).toBe(200);
      expect((await client.request('GET', channels, { headers: { 'x-api-key': key } })).status).toBe(200);
      const wrongSecret = `${key.split('.')[0]}.${'Zx9'.repeat(14)}A`;
      expect((await client.request('GET', channels, { headers: { 'x-api-key': wrongSecret } })).status).toBe(401);
      secrets['wrong key secret'] = wrongSecret.split('.')[1]!;
      expect((await post(`/v1/api-keys/${created.json.id}/revoke`, {}, bearer)).status).toBeLessThan(300);
      expect((await client.request('GET', channels, { headers: { 'x-api-key': key } })).status).toBe(401);
      // A key in a malformed header (the guard refuses it) must not be logged either.
      expect((await client.request('GET', channels, { headers: { authorization: `ApiKey ${key} extra` } })).status).toBe(401);

      // The event stream with the token in the query string (EventSource cannot send headers).
      const stream = await fetch(`${api.url}/v1/stream?token=${encodeURIComponent(login.json.token)}`);
      expect(stream.status).toBe(200);
      await stream.body?.cancel();

      // Sign-out, then the revoked token once more.
      expect((await client.request('POST', '/v1/auth/logout', { headers: bearer })).status).toBe(204);
      expect((await client.request('GET', '/v1/me', { headers: bearer })).status).toBe(401);
      await new Promise((resolve) => setTimeout(resolve, 200)); // request log lines are written on 'finish'/'close'
    });

    const logs = [...logLines, ...output].join('\n');
    expect(logLines.length).toBeGreaterThan(15); // the capture works: one line per request at least
    expect(logLines.filter((l) => l.includes('"msg":"request"')).length).toBeGreaterThan(15);
    // The lines of the key's requests are there, naming the key by its public prefix only.
    expect(logLines.some((l) => l.includes(`"principalId":"${keyPrefix}"`))).toBe(true);
    for (const [what, secret] of Object.entries(secrets)) {
      expect(secret.length, what).toBeGreaterThanOrEqual(12);
      expect(logs.includes(secret), `${what} appears in the logs`).toBe(false);
      expect(logs.includes(encodeURIComponent(secret)), `${what} (URL-encoded) appears in the logs`).toBe(false);
    }

    // Nor anywhere in the database: every column of every table, as text.
    const { rows: tables } = await db.pool.query<{ tablename: string }>(`SELECT tablename FROM pg_tables WHERE schemaname = 'public'`);
    for (const { tablename } of tables) {
      const { rows } = await db.pool.query<{ row: string }>(`SELECT x::text AS row FROM "${tablename}" x`);
      const dump = rows.map((r) => r.row).join('\n');
      for (const [what, secret] of Object.entries(secrets)) expect(dump.includes(secret), `${what} stored in table ${tablename}`).toBe(false);
    }
  });
});
