/**
 * Dependency injection works under vitest: SWC (unplugin-swc in vitest.config.ts) must emit
 * decorator metadata, or Nest cannot resolve constructor parameters. esbuild/tsx would not.
 */
import { describe, expect, it } from 'vitest';
import { Reflector } from '@nestjs/core';
import { PlantController } from '../src/admin/plant.controller.js';
import { PlantService } from '../src/admin/plant.service.js';
import { AccessGuard } from '../src/auth/access.guard.js';
import { AuthService } from '../src/auth/auth.service.js';
import { API_CONFIG, type ApiConfig } from '../src/app-config.js';
import { PRISMA } from '../src/prisma.provider.js';
import { startTestApi } from './support/test-api.js';

const { api, config } = await startTestApi('di');

describe('dependency injection under vitest', () => {
  it('emits constructor parameter metadata for injectable classes', () => {
    expect(Reflect.getMetadata('design:paramtypes', PlantController)).toEqual([PlantService]);
    expect(Reflect.getMetadata('design:paramtypes', AccessGuard)).toEqual([Reflector, AuthService]);
  });

  it('resolves services with their dependencies, which work against the real database', async () => {
    const auth = api.app.get(AuthService);
    const plant = api.app.get(PlantService);
    expect(api.app.get<ApiConfig>(API_CONFIG)).toBe(config);
    // Prisma 7 clients are proxies: check behaviour, never instanceof.
    const prisma = api.app.get(PRISMA);
    expect(typeof prisma.user.findMany).toBe('function');

    const user = await prisma.user.create({ data: { email: 'di@plant.test', displayName: 'DI', passwordHash: 'x', roles: ['ADMIN'] } });
    const { token } = await auth.createSession(user.id);
    const principal = await auth.authenticateSession(token);
    expect(principal).toMatchObject({ kind: 'user', userId: user.id, roles: ['ADMIN'] });
    const line = await plant.createLine({ code: 'DI-1', name: 'DI line', timeZone: 'UTC' });
    expect((await plant.getLine(line.id)).code).toBe('DI-1');
  });
});
