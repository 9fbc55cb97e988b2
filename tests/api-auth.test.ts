/**
 * Sign-in, sessions, API keys and their scoping, through the real API on a real database.
 */
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { createApiKeyFor, createTestPlant, createUserWithSession, prismaOf, TEST_PASSWORD } from '../apps/api/test/support/principals.js';
import { startTestApi } from '../apps/api/test/support/test-api.js';

const { api, config } = await startTestApi('api-auth');
const prisma = prismaOf(api.app);
const plant = await createTestPlant(api.app);
const admin = await createUserWithSession(api.app, { roles: ['ADMIN'] });

const sha256 = (text: string) => createHash('sha256').update(text).digest('hex');

async function send(method: string, path: string, options: { headers?: Record<string, string>; body?: unknown } = {}) {
  const res = await fetch(`${api.url}${path}`, {
    method,
    headers: { ...(options.body !== undefined ? { 'content-type': 'application/json' } : {}), ...options.headers },
    body: options.body !== undefined ? JSON.stringify(options.body) : undefined,
  });
  const text = await res.text();
  let json: any;
  try {
    json = text ? JSON.parse(text) : undefined;
  } catch {
    json = undefined;
  }
  return { status: res.status, json, text, headers: res.headers };
}

async function login(email: string, password: string) {
  return send('POST', '/v1/auth/login', { body: { email, password } });
}

describe('login, sessions, logout', () => {
  const email = 'Metallurgist.One@plant.test';
  const password = 'a-long-enough-password-1';
  let userId: string;

  it('creates a user with roles (admin) and stores only a scrypt hash of the password', async () => {
    const res = await send('POST', '/v1/users', { headers: admin.headers, body: { email, displayName: 'M. One', roles: ['METALLURGIST'], password } });
    expect(res.status).toBe(201);
    expect(res.json.user).toMatchObject({ email: email.toLowerCase(), roles: ['METALLURGIST'], active: true });
    expect(res.json.oneTimePassword).toBeUndefined();
    expect(JSON.stringify(res.json)).not.toContain('passwordHash');
    userId = res.json.user.id;
    const row = await prisma.user.findUniqueOrThrow({ where: { id: userId } });
    expect(row.passwordHash).toMatch(/^scrypt\$N=32768,r=8,p=3\$[A-Za-z0-9+/=]+\$[A-Za-z0-9+/=]+$/);
    expect(row.passwordHash).not.toContain(password);
  });

  it('signs in (e-mail case-insensitive) with a token that expires after SESSION_TTL_MIN; the token is stored hashed', async () => {
    const before = Date.now();
    const res = await login(email.toUpperCase(), password);
    expect(res.status).toBe(200);
    expect(res.json).toMatchObject({ tokenType: 'Bearer', user: { id: userId, roles: ['METALLURGIST'] } });
    const token: string = res.json.token;
    expect(token.length).toBeGreaterThanOrEqual(40);
    const expiresAt = Date.parse(res.json.expiresAt);
    const ttlMs = config.SESSION_TTL_MIN * 60_000;
    expect(expiresAt).toBeGreaterThanOrEqual(before + ttlMs - 1000);
    expect(expiresAt).toBeLessThanOrEqual(Date.now() + ttlMs + 1000);

    const sessions = await prisma.session.findMany({ where: { userId } });
    expect(sessions.map((s) => s.tokenHash)).toContain(sha256(token));
    expect(sessions.map((s) => s.tokenHash)).not.toContain(token);

    const me = await send('GET', '/v1/me', { headers: { authorization: `Bearer ${token}` } });
    expect(me.status).toBe(200);
    expect(me.json).toMatchObject({ kind: 'user', user: { id: userId, email: email.toLowerCase() } });
  });

  it('answers a wrong password and an unknown e-mail alike with 401', async () => {
    const wrong = await login(email, 'not-the-password-at-all');
    const unknown = await login('nobody@plant.test', password);
    expect(wrong.status).toBe(401);
    expect(unknown.status).toBe(401);
    expect(wrong.json.message).toBe(unknown.json.message);
    expect(wrong.headers.get('www-authenticate')).toContain('Bearer');
  });

  it('rejects a malformed login body with 400 naming the field', async () => {
    const res = await send('POST', '/v1/auth/login', { body: { email: 'x@plant.test' } });
    expect(res.status).toBe(400);
    expect(res.json.issues).toContainEqual(expect.objectContaining({ path: 'password' }));
  });

  it('logout revokes the session: the token is unknown afterwards', async () => {
    const { json } = await login(email, password);
    const auth = { authorization: `Bearer ${json.token}` };
    expect((await send('GET', '/v1/me', { headers: auth })).status).toBe(200);
    expect((await send('POST', '/v1/auth/logout', { headers: auth })).status).toBe(204);
    const after = await send('GET', '/v1/me', { headers: auth });
    expect(after.status).toBe(401);
    expect(after.json.message).toMatch(/unknown or expired/);
    expect(await prisma.session.count({ where: { tokenHash: sha256(json.token) } })).toBe(0);
    expect((await send('POST', '/v1/auth/logout', { headers: auth })).status).toBe(401);
  });

  it('an expired session gets 401 and is removed', async () => {
    const { json } = await login(email, password);
    await prisma.session.update({ where: { tokenHash: sha256(json.token) }, data: { expiresAt: new Date(Date.now() - 1000) } });
    const res = await send('GET', '/v1/me', { headers: { authorization: `Bearer ${json.token}` } });
    expect(res.status).toBe(401);
    expect(await prisma.session.count({ where: { tokenHash: sha256(json.token) } })).toBe(0);
  });

  it('changing the password needs the current one and signs out the other sessions', async () => {
    const first = (await login(email, password)).json.token as string;
    const second = (await login(email, password)).json.token as string;
    const bad = await send('POST', '/v1/me/password', {
      headers: { authorization: `Bearer ${first}` },
      body: { currentPassword: 'wrong-password-here', newPassword: 'another-long-password-2' },
    });
    expect(bad.status).toBe(401);
    const short = await send('POST', '/v1/me/password', {
      headers: { authorization: `Bearer ${first}` },
      body: { currentPassword: password, newPassword: 'short' },
    });
    expect(short.status).toBe(400);
    expect(short.json.issues).toContainEqual(expect.objectContaining({ path: 'newPassword' }));

    const ok = await send('POST', '/v1/me/password', {
      headers: { authorization: `Bearer ${first}` },
      body: { currentPassword: password, newPassword: 'another-long-password-2' },
    });
    expect(ok.status).toBe(204);
    expect((await send('GET', '/v1/me', { headers: { authorization: `Bearer ${first}` } })).status).toBe(200);
    expect((await send('GET', '/v1/me', { headers: { authorization: `Bearer ${second}` } })).status).toBe(401);
    expect((await login(email, password)).status).toBe(401);
    expect((await login(email, 'another-long-password-2')).status).toBe(200);
  });

  it('deactivating a user revokes their sessions and refuses their sign-in; repeating it is harmless', async () => {
    const user = await createUserWithSession(api.app, { roles: ['QUALITY'] });
    expect((await send('GET', '/v1/me', { headers: user.headers })).status).toBe(200);
    const res = await send('POST', `/v1/users/${user.id}/deactivate`, { headers: admin.headers });
    expect(res.status).toBe(200);
    expect(res.json).toMatchObject({ id: user.id, active: false });
    expect((await send('POST', `/v1/users/${user.id}/deactivate`, { headers: admin.headers })).status).toBe(200);
    expect((await send('GET', '/v1/me', { headers: user.headers })).status).toBe(401);
    expect((await login(user.email, TEST_PASSWORD)).status).toBe(401);
  });

  it('refuses to deactivate the last active admin', async () => {
    const admins = await prisma.user.findMany({ where: { active: true, roles: { has: 'ADMIN' } } });
    expect(admins.map((a) => a.id)).toEqual([admin.id]);
    const res = await send('POST', `/v1/users/${admin.id}/deactivate`, { headers: admin.headers });
    expect(res.status).toBe(409);
    expect(res.json.message).toMatch(/last active admin/);
  });

  it('a user created without a password gets a one-time password, shown once, that signs in', async () => {
    const res = await send('POST', '/v1/users', {
      headers: admin.headers,
      body: { email: 'quality.two@plant.test', displayName: 'Q. Two', roles: ['QUALITY'] },
    });
    expect(res.status).toBe(201);
    const oneTime: string = res.json.oneTimePassword;
    expect(oneTime.length).toBeGreaterThanOrEqual(16);
    expect((await login('quality.two@plant.test', oneTime)).status).toBe(200);
    const listed = await send('GET', '/v1/users', { headers: admin.headers });
    expect(listed.text).not.toContain(oneTime);
    expect(listed.text).not.toContain('scrypt$');
  });

  it('a repeated user create answers 409 naming the existing user, without a second row', async () => {
    const body = { email: 'dup@plant.test', displayName: 'Dup', roles: ['METALLURGIST'], password: 'a-long-enough-password-3' };
    const first = await send('POST', '/v1/users', { headers: admin.headers, body });
    const again = await send('POST', '/v1/users', { headers: admin.headers, body: { ...body, email: 'DUP@plant.test' } });
    expect(first.status).toBe(201);
    expect(again.status).toBe(409);
    expect(again.json.message).toContain(first.json.user.id);
    expect(await prisma.user.count({ where: { email: 'dup@plant.test' } })).toBe(1);
  });
});

describe('credentials in headers', () => {
  it('answers 401 for no credential, an unsupported scheme, and two credentials at once', async () => {
    const key = await createApiKeyFor(api.app, { scope: 'LAB' });
    expect((await send('GET', '/v1/me')).status).toBe(401);
    const basic = await send('GET', '/v1/me', { headers: { authorization: 'Basic dXNlcjpwYXNz' } });
    expect(basic.status).toBe(401);
    expect(basic.json.message).toMatch(/Unsupported Authorization/);
    const both = await send('GET', '/v1/me', { headers: { ...admin.headers, 'x-api-key': key.key } });
    expect(both.status).toBe(401);
    expect(both.json.message).toMatch(/not both/);
  });

  it('accepts a key in X-Api-Key as well as in Authorization: ApiKey', async () => {
    const key = await createApiKeyFor(api.app, { scope: 'LAB' });
    const viaHeader = await send('GET', '/v1/me', { headers: { 'x-api-key': key.key } });
    const viaAuthorization = await send('GET', '/v1/me', { headers: { authorization: `ApiKey ${key.key}` } });
    expect(viaHeader.json).toMatchObject({ kind: 'apiKey', keyId: key.id, scope: 'LAB', equipmentIds: [] });
    expect(viaAuthorization.json).toEqual(viaHeader.json);
  });

  it('rejects a key with a right prefix but a wrong secret', async () => {
    const key = await createApiKeyFor(api.app, { scope: 'LAB' });
    const forged = `${key.prefix}.${'A'.repeat(43)}`;
    expect((await send('GET', '/v1/me', { headers: { 'x-api-key': forged } })).status).toBe(401);
  });
});

describe('API keys', () => {
  it('creates an EQUIPMENT key shown once; stores the prefix and the SHA-256 of the secret only', async () => {
    const res = await send('POST', '/v1/api-keys', {
      headers: admin.headers,
      body: { label: 'bath 2 controller', scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id] },
    });
    expect(res.status).toBe(201);
    const key: string = res.json.key;
    const [prefix, secret] = key.split('.');
    expect(res.json).toMatchObject({ prefix, scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id], revokedAt: null });
    const row = await prisma.apiKey.findUniqueOrThrow({ where: { prefix: prefix! } });
    expect(row.secretHash).toBe(sha256(secret!));
    expect(JSON.stringify(row)).not.toContain(secret);

    const listed = await send('GET', '/v1/api-keys', { headers: admin.headers });
    expect(listed.status).toBe(200);
    expect(listed.text).not.toContain(secret);
    const entry = listed.json.find((k: { id: string }) => k.id === res.json.id);
    expect(entry).toMatchObject({ prefix, label: 'bath 2 controller' });
    expect(entry).not.toHaveProperty('key');
    expect(entry).not.toHaveProperty('secretHash');
  });

  it('a key for bath 2 may act for bath 2 and is refused (403) for bath 3', async () => {
    const res = await send('POST', '/v1/api-keys', {
      headers: admin.headers,
      body: { label: 'bath 2 controller (scoping)', scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id] },
    });
    const headers = { authorization: `ApiKey ${res.json.key}` };
    expect((await send('GET', `/v1/equipment/${plant.bath2Id}/channels`, { headers })).status).toBe(200);
    expect((await send('GET', `/v1/equipment/${plant.bath2Id}`, { headers })).status).toBe(200);
    const other = await send('GET', `/v1/equipment/${plant.bath3Id}/channels`, { headers });
    expect(other.status).toBe(403);
    expect(other.json.message).toContain(plant.bath3Id);
    expect((await send('GET', `/v1/equipment/${plant.bath3Id}`, { headers })).status).toBe(403);
    // A LAB key is no controller key, and keys never reach the admin endpoints.
    const lab = await createApiKeyFor(api.app, { scope: 'LAB' });
    expect((await send('GET', `/v1/equipment/${plant.bath2Id}/channels`, { headers: lab.headers })).status).toBe(403);
    expect((await send('GET', '/v1/api-keys', { headers })).status).toBe(403);
  });

  it('a key for bath 2 posts samples for bath 2; for bath 3 it gets 403 and nothing is stored', async () => {
    for (const equipmentId of [plant.bath2Id, plant.bath3Id]) {
      await prisma.channel.create({ data: { equipmentId, code: 'tc1', quantity: 'TEMPERATURE_C', role: 'BATH_TC' } });
    }
    const key = await createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id] });
    const body = { samples: [{ channel: 'tc1', t: new Date(Date.now() - 60_000).toISOString(), value: 365.2 }] };
    const own = await send('POST', `/v1/equipment/${plant.bath2Id}/samples`, { headers: key.headers, body });
    expect(own.status, own.text).toBeLessThan(300);
    expect(own.json).toMatchObject({ stored: 1 });
    const foreign = await send('POST', `/v1/equipment/${plant.bath3Id}/samples`, { headers: key.headers, body });
    expect(foreign.status).toBe(403);
    expect(foreign.json.message).toContain(plant.bath3Id);
    const bath3Samples = await prisma.sample.count({ where: { channel: { equipmentId: plant.bath3Id } } });
    expect(bath3Samples).toBe(0);
    // Not even an admin's session may post samples: that is the controllers' job.
    expect((await send('POST', `/v1/equipment/${plant.bath2Id}/samples`, { headers: admin.headers, body })).status).toBe(403);
  });

  it('a revoked key is refused from the next request on; revoking again keeps the first time', async () => {
    const key = await createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id] });
    expect((await send('GET', '/v1/me', { headers: key.headers })).status).toBe(200);
    const first = await send('POST', `/v1/api-keys/${key.id}/revoke`, { headers: admin.headers });
    expect(first.status).toBe(200);
    expect(first.json.revokedAt).not.toBeNull();
    const me = await send('GET', '/v1/me', { headers: key.headers });
    expect(me.status).toBe(401);
    expect(me.json.message).toMatch(/unknown or revoked/);
    const again = await send('POST', `/v1/api-keys/${key.id}/revoke`, { headers: admin.headers });
    expect(again.json.revokedAt).toBe(first.json.revokedAt);
  });

  it('validates scope and equipment: 400 naming the field', async () => {
    const noEquipment = await send('POST', '/v1/api-keys', { headers: admin.headers, body: { label: 'k1', scope: 'EQUIPMENT' } });
    expect(noEquipment.status).toBe(400);
    expect(noEquipment.json.issues).toContainEqual(expect.objectContaining({ path: 'equipmentIds' }));

    const labWithEquipment = await send('POST', '/v1/api-keys', {
      headers: admin.headers,
      body: { label: 'k2', scope: 'LAB', equipmentIds: [plant.bath2Id] },
    });
    expect(labWithEquipment.status).toBe(400);
    expect(labWithEquipment.json.issues).toContainEqual(expect.objectContaining({ path: 'equipmentIds' }));

    const unknown = '00000000-0000-4000-8000-000000000000';
    const unknownEquipment = await send('POST', '/v1/api-keys', {
      headers: admin.headers,
      body: { label: 'k3', scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id, unknown] },
    });
    expect(unknownEquipment.status).toBe(400);
    expect(unknownEquipment.json.issues).toEqual([{ path: 'equipmentIds.1', message: `no equipment with id ${unknown}` }]);
    expect(await prisma.apiKey.count({ where: { label: { in: ['k1', 'k2', 'k3'] } } })).toBe(0);
  });

  it('a retried create with the same label answers 409 while the first key is live, and works after revoking it', async () => {
    const body = { label: 'lab bench 1', scope: 'LAB' };
    const first = await send('POST', '/v1/api-keys', { headers: admin.headers, body });
    const retry = await send('POST', '/v1/api-keys', { headers: admin.headers, body });
    expect(first.status).toBe(201);
    expect(retry.status).toBe(409);
    expect(retry.json.message).toContain(first.json.prefix);
    await send('POST', `/v1/api-keys/${first.json.id}/revoke`, { headers: admin.headers });
    expect((await send('POST', '/v1/api-keys', { headers: admin.headers, body })).status).toBe(201);
  });
});
