/**
 * The whole access matrix, against the running API (real Postgres, real Redis):
 *   - every route the app registers is listed in apps/api/src/auth/endpoint-matrix.ts, and every
 *     entry there is a registered route (no stale entries);
 *   - each entry's rule equals the @Access declaration on its handler;
 *   - each endpoint called as anonymous, METALLURGIST, QUALITY, ADMIN, an EQUIPMENT key in scope,
 *     the same key for equipment it is not scoped to, and a LAB key answers allowed / 401 / 403
 *     exactly as the entry says.
 */
import { randomUUID } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { normalizeKeys, type AccessRule, type Role } from '../apps/api/src/auth/access.js';
import { ENDPOINT_MATRIX, NON_NEST_ROUTES, type EndpointEntry } from '../apps/api/src/auth/endpoint-matrix.js';
import { createApiKeyFor, createTestPlant, createUserWithSession, newSessionFor } from '../apps/api/test/support/principals.js';
import { nestHandlers, registeredRoutes } from '../apps/api/test/support/routes.js';
import { startTestApi } from '../apps/api/test/support/test-api.js';

const { api } = await startTestApi('auth-matrix');
const plant = await createTestPlant(api.app);
const users = {
  METALLURGIST: await createUserWithSession(api.app, { roles: ['METALLURGIST'] }),
  QUALITY: await createUserWithSession(api.app, { roles: ['QUALITY'] }),
  ADMIN: await createUserWithSession(api.app, { roles: ['ADMIN'] }),
} satisfies Record<Role, unknown>;
// Scoped to bath 2 only; "out of scope" = the same key naming bath 3 in the path.
const equipmentKey = await createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.bath2Id] });
const labKey = await createApiKeyFor(api.app, { scope: 'LAB' });

type Caller = 'anonymous' | Role | 'equipmentKeyInScope' | 'equipmentKeyOutOfScope' | 'labKey';
const CALLERS: Caller[] = ['anonymous', 'METALLURGIST', 'QUALITY', 'ADMIN', 'equipmentKeyInScope', 'equipmentKeyOutOfScope', 'labKey'];

/**
 * 'allowed'      the guard lets the call through: neither 401 nor 403, and no 5xx
 * 'guardAllows'  an EQUIPMENT key on an endpoint whose equipment is not in the path: the guard lets
 *                it through and the service checks the key's equipment itself (it may answer 403/404)
 */
type Expected = 'allowed' | 'guardAllows' | 401 | 403;

function expectedFor(rule: AccessRule, caller: Caller): Expected {
  if (rule.public) return 'allowed';
  if (caller === 'anonymous') return 401;
  if (caller === 'METALLURGIST' || caller === 'QUALITY' || caller === 'ADMIN') {
    return (rule.roles ?? []).includes(caller) ? 'allowed' : 403;
  }
  const keys = normalizeKeys(rule.keys);
  if (caller === 'labKey') return keys.includes('LAB') ? 'allowed' : 403;
  if (!keys.includes('EQUIPMENT')) return 403;
  if (caller === 'equipmentKeyInScope') return 'allowed';
  return rule.equipmentParam !== undefined ? 403 : 'guardAllows';
}

function matches(expected: Expected, status: number): boolean {
  if (expected === 401 || expected === 403) return status === expected;
  if (expected === 'guardAllows') return status !== 401 && status < 500;
  return status !== 401 && status !== 403 && status < 500;
}

async function headersFor(caller: Caller): Promise<Record<string, string>> {
  switch (caller) {
    case 'anonymous':
      return {};
    case 'METALLURGIST':
    case 'QUALITY':
    case 'ADMIN':
      // A fresh session per call: logout revokes the one it is called with.
      return { authorization: `Bearer ${await newSessionFor(api.app, users[caller].id)}` };
    case 'equipmentKeyInScope':
    case 'equipmentKeyOutOfScope':
      return equipmentKey.headers;
    case 'labKey':
      return labKey.headers;
  }
}

/** Fills path parameters: the equipment parameter with bath 2 (in scope) or bath 3, others with a fresh UUID. */
function concretePath(entry: EndpointEntry, caller: Caller): string {
  return entry.path.replace(/:([A-Za-z0-9_]+)/g, (_m, name: string) => {
    if (name === entry.access.equipmentParam) return caller === 'equipmentKeyOutOfScope' ? plant.bath3Id : plant.bath2Id;
    return randomUUID();
  });
}

async function call(entry: EndpointEntry, caller: Caller): Promise<{ status: number; body: string }> {
  const headers: Record<string, string> = { ...(await headersFor(caller)) };
  const hasBody = entry.method !== 'GET' && entry.method !== 'DELETE';
  if (hasBody) headers['content-type'] = 'application/json';
  const abort = new AbortController();
  const timer = setTimeout(() => abort.abort(), 10_000);
  try {
    const res = await fetch(`${api.url}${concretePath(entry, caller)}`, {
      method: entry.method,
      headers,
      body: hasBody ? '{}' : undefined,
      signal: abort.signal,
    });
    // A stream never ends by itself: the status is all we need.
    const body = entry.stream && res.ok ? '' : await res.text();
    if (entry.stream) await res.body?.cancel().catch(() => undefined);
    return { status: res.status, body: body.slice(0, 300) };
  } finally {
    clearTimeout(timer);
    abort.abort();
  }
}

const key = (method: string, path: string) => `${method} ${path}`;

describe('endpoint matrix covers the app', () => {
  it('lists every registered route, and every entry is a registered route', () => {
    const registered = new Set(registeredRoutes(api.app).map((r) => key(r.method, r.path)));
    const listed = new Set([...ENDPOINT_MATRIX, ...NON_NEST_ROUTES].map((e) => key(e.method, e.path)));
    const missingFromMatrix = [...registered].filter((r) => !listed.has(r)).sort();
    const notRegistered = [...listed].filter((r) => !registered.has(r)).sort();
    expect(missingFromMatrix, 'routes the app serves that endpoint-matrix.ts does not list').toEqual([]);
    expect(notRegistered, 'endpoint-matrix.ts entries that match no route').toEqual([]);
    expect(ENDPOINT_MATRIX.length).toBeGreaterThanOrEqual(21);
  });

  it('lists no endpoint twice', () => {
    const keys = ENDPOINT_MATRIX.map((e) => key(e.method, e.path));
    expect(keys.filter((k, i) => keys.indexOf(k) !== i)).toEqual([]);
  });

  it("declares for each endpoint the same rule as the handler's @Access", () => {
    const handlers = nestHandlers(api.app);
    // Every handler is found, so the comparison below covers all of them.
    expect(handlers.map((h) => key(h.method, h.path)).sort()).toEqual(ENDPOINT_MATRIX.map((e) => key(e.method, e.path)).sort());
    const mismatches = handlers
      .map((handler) => {
        const entry = ENDPOINT_MATRIX.find((e) => e.method === handler.method && e.path === handler.path);
        return { route: key(handler.method, handler.path), where: `${handler.controller}.${handler.handler}`, handler: handler.access, matrix: entry?.access };
      })
      .filter((m) => JSON.stringify(canonical(m.handler)) !== JSON.stringify(canonical(m.matrix)));
    expect(mismatches).toEqual([]);
  });

  it('serves the OpenAPI routes to anonymous callers', async () => {
    for (const route of NON_NEST_ROUTES) {
      const res = await fetch(`${api.url}${route.path}`);
      await res.text();
      expect(res.status, route.path).toBe(route.anonymousStatus);
    }
  });
});

function canonical(rule: AccessRule | undefined): unknown {
  if (!rule) return null;
  return {
    public: rule.public ?? false,
    roles: [...(rule.roles ?? [])].sort(),
    keys: [...normalizeKeys(rule.keys)].sort(),
    equipmentParam: rule.equipmentParam ?? null,
  };
}

describe.each(ENDPOINT_MATRIX.map((entry) => [key(entry.method, entry.path), entry] as const))('%s', (_name, entry) => {
  it('answers every kind of caller as declared', async () => {
    const outcomes = await Promise.all(
      CALLERS.map(async (caller) => {
        const expected = expectedFor(entry.access, caller);
        const { status, body } = await call(entry, caller);
        return { caller, expected, status, ok: matches(expected, status), body };
      }),
    );
    const wrong = outcomes.filter((o) => !o.ok).map(({ caller, expected, status, body }) => ({ caller, expected, status, body }));
    expect(wrong).toEqual([]);
    // The matrix must exercise both sides: non-public endpoints refuse someone.
    if (!entry.access.public) expect(outcomes.some((o) => o.status === 401 || o.status === 403)).toBe(true);
  });
});
