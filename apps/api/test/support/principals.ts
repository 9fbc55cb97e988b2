/**
 * Test principals without HTTP round trips or repeated scrypt work. For integration tests that boot
 * the API with createApiApp:
 *
 *   const admin = await createUserWithSession(api.app, { roles: ['ADMIN'] });
 *   fetch(url, { headers: admin.headers });                       // { authorization: 'Bearer …' }
 *   const key = await createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [bathId] });
 *   fetch(url, { headers: key.headers });                         // { authorization: 'ApiKey …' }
 *
 * Users get TEST_PASSWORD, hashed once per process, so a test can also sign in through
 * POST /v1/auth/login with it.
 */
import { randomBytes } from 'node:crypto';
import type { INestApplication } from '@nestjs/common';
import type { PrismaClient } from '@ausline/db';
import type { Role } from '../../src/auth/access.js';
import { AuthService } from '../../src/auth/auth.service.js';
import { hashPassword, newApiKey } from '../../src/auth/secrets.js';
import { PRISMA } from '../../src/prisma.provider.js';

export const TEST_PASSWORD = 'test-password-0123456789';

let testPasswordHash: Promise<string> | undefined;
function testHash(): Promise<string> {
  testPasswordHash ??= hashPassword(TEST_PASSWORD);
  return testPasswordHash;
}

export interface TestUser {
  id: string;
  email: string;
  roles: Role[];
  token: string;
  headers: Record<string, string>;
}

export interface TestKey {
  id: string;
  prefix: string;
  key: string;
  headers: Record<string, string>;
}

export function prismaOf(app: INestApplication): PrismaClient {
  return app.get<PrismaClient>(PRISMA);
}

export async function createUserWithSession(
  app: INestApplication,
  options: { roles: Role[]; email?: string; displayName?: string; active?: boolean },
): Promise<TestUser> {
  const email = options.email ?? `user-${randomBytes(4).toString('hex')}@plant.test`;
  const user = await prismaOf(app).user.create({
    data: {
      email,
      displayName: options.displayName ?? email,
      roles: options.roles,
      passwordHash: await testHash(),
      active: options.active ?? true,
    },
  });
  const { token } = await app.get(AuthService).createSession(user.id);
  return { id: user.id, email, roles: options.roles, token, headers: { authorization: `Bearer ${token}` } };
}

/** A new session for an existing user (e.g. after another test revoked one). */
export async function newSessionFor(app: INestApplication, userId: string): Promise<string> {
  return (await app.get(AuthService).createSession(userId)).token;
}

export async function createApiKeyFor(
  app: INestApplication,
  options: { scope: 'EQUIPMENT' | 'LAB'; equipmentIds?: string[]; label?: string },
): Promise<TestKey> {
  const { key, prefix, secretHash } = newApiKey();
  const row = await prismaOf(app).apiKey.create({
    data: {
      prefix,
      secretHash,
      label: options.label ?? `test key ${prefix}`,
      scope: options.scope,
      equipment: { create: (options.equipmentIds ?? []).map((equipmentId) => ({ equipmentId })) },
    },
  });
  return { id: row.id, prefix, key, headers: { authorization: `ApiKey ${key}` } };
}

export interface TestPlant {
  lineId: string;
  furnaceId: string;
  /** Two baths of one line, for scoping tests (a key for bath 2 must not post for bath 3). */
  bath2Id: string;
  bath3Id: string;
}

/** A line with a furnace and two baths, written straight to the database. */
export async function createTestPlant(app: INestApplication, code = `L-${randomBytes(3).toString('hex')}`): Promise<TestPlant> {
  const prisma = prismaOf(app);
  const line = await prisma.line.create({ data: { code, name: `Line ${code}`, timeZone: 'UTC' } });
  const furnace = await prisma.equipment.create({ data: { lineId: line.id, kind: 'FURNACE', code: `${code}-F1`, name: 'Furnace 1' } });
  const bath2 = await prisma.equipment.create({ data: { lineId: line.id, kind: 'BATH', code: `${code}-B2`, name: 'Bath 2' } });
  const bath3 = await prisma.equipment.create({ data: { lineId: line.id, kind: 'BATH', code: `${code}-B3`, name: 'Bath 3' } });
  return { lineId: line.id, furnaceId: furnace.id, bath2Id: bath2.id, bath3Id: bath3.id };
}
