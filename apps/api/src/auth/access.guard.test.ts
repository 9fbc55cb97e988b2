import { Reflector } from '@nestjs/core';
import type { ExecutionContext } from '@nestjs/common';
import { describe, expect, it } from 'vitest';
import { ApiError } from '../http/errors.js';
import { Access, type Principal } from './access.js';
import { AccessGuard, authorize } from './access.guard.js';
import type { AuthService } from './auth.service.js';

const metallurgist: Principal = { kind: 'user', userId: 'u1', email: 'm@plant.test', roles: ['METALLURGIST'], sessionId: 's1' };
const bath2Key: Principal = { kind: 'apiKey', keyId: 'k1', prefix: 'ak_000000000001', scope: 'EQUIPMENT', equipmentIds: ['bath-2'] };
const labKey: Principal = { kind: 'apiKey', keyId: 'k2', prefix: 'ak_000000000002', scope: 'LAB', equipmentIds: [] };

function statusOf(run: () => void): number | 'allowed' {
  try {
    run();
    return 'allowed';
  } catch (error) {
    if (error instanceof ApiError) return error.getStatus();
    throw error;
  }
}

describe('authorize', () => {
  it('lets users in by role only', () => {
    expect(statusOf(() => authorize({ roles: ['METALLURGIST', 'QUALITY'] }, metallurgist, {}))).toBe('allowed');
    expect(statusOf(() => authorize({ roles: ['QUALITY'] }, metallurgist, {}))).toBe(403);
    expect(statusOf(() => authorize({ keys: 'EQUIPMENT' }, metallurgist, {}))).toBe(403);
  });

  it('lets keys in by scope, and EQUIPMENT keys only for their own equipment', () => {
    const rule = { keys: ['EQUIPMENT', 'LAB'] as const, equipmentParam: 'id' };
    expect(statusOf(() => authorize({ ...rule, keys: [...rule.keys] }, bath2Key, { id: 'bath-2' }))).toBe('allowed');
    expect(statusOf(() => authorize({ ...rule, keys: [...rule.keys] }, bath2Key, { id: 'bath-3' }))).toBe(403);
    expect(statusOf(() => authorize({ ...rule, keys: [...rule.keys] }, bath2Key, {}))).toBe(403);
    // The equipment parameter binds EQUIPMENT keys only.
    expect(statusOf(() => authorize({ ...rule, keys: [...rule.keys] }, labKey, { id: 'bath-3' }))).toBe('allowed');
    expect(statusOf(() => authorize({ keys: 'LAB' }, bath2Key, {}))).toBe(403);
    expect(statusOf(() => authorize({ roles: ['ADMIN'] }, labKey, {}))).toBe(403);
  });
});

describe('AccessGuard', () => {
  class Handlers {
    @Access({ roles: ['ADMIN'] })
    declared(): void {}
    undeclared(): void {}
  }

  function contextFor(handler: () => void, headers: Record<string, string> = {}): ExecutionContext {
    const request = { headers, params: {} };
    return {
      getType: () => 'http',
      getHandler: () => handler,
      getClass: () => Handlers,
      switchToHttp: () => ({ getRequest: () => request, getResponse: () => ({}), getNext: () => undefined }),
    } as unknown as ExecutionContext;
  }

  // These cases are decided before any credential is looked up, so no AuthService is needed (a call
  // to it would throw and fail the test). Credential checks are covered against the database in
  // tests/api-auth.test.ts and tests/auth-matrix.test.ts.
  const guard = new AccessGuard(new Reflector(), null as unknown as AuthService);

  it('denies a handler without @Access with 403, even to anonymous callers', async () => {
    await expect(guard.canActivate(contextFor(Handlers.prototype.undeclared))).rejects.toMatchObject({ status: 403 });
  });

  it('answers 401 without a credential, or with an unsupported or doubled one, on a declared handler', async () => {
    await expect(guard.canActivate(contextFor(Handlers.prototype.declared))).rejects.toMatchObject({ status: 401 });
    await expect(guard.canActivate(contextFor(Handlers.prototype.declared, { authorization: 'Basic abc' }))).rejects.toMatchObject({ status: 401 });
    await expect(
      guard.canActivate(contextFor(Handlers.prototype.declared, { authorization: 'Bearer abc', 'x-api-key': 'ak_x.y' })),
    ).rejects.toMatchObject({ status: 401 });
  });
});
