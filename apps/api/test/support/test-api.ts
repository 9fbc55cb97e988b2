/**
 * Boots the API for one test file against its own database and queue prefix:
 *
 *   const { api, db } = await startTestApi('auth');     // top level of the test file
 *   // api.url, api.app (Nest), db.prisma; closed and dropped in afterAll
 */
import { afterAll } from 'vitest';
import { createTestDatabase, type TestDatabase } from '../../../../tests/support/database.js';
import { testAppEnv } from '../../../../tests/support/env.js';
import { testQueuePrefix } from '../../../../tests/support/redis.js';
import { loadConfig } from '@ausline/contracts';
import type { ApiConfig } from '../../src/app-config.js';
import { createApiApp, type ApiHandle } from '../../src/create-api-app.js';

export interface TestApi {
  api: ApiHandle;
  db: TestDatabase;
  config: ApiConfig;
}

export async function startTestApi(label: string, overrides: Partial<ApiConfig> = {}): Promise<TestApi> {
  const db = await createTestDatabase();
  const env = testAppEnv({ databaseUrl: db.url, queuePrefix: testQueuePrefix(label) }, { LOG_LEVEL: 'silent' });
  const config: ApiConfig = { ...loadConfig(env), ...overrides };
  const api = await createApiApp(config);
  afterAll(() => api.close());
  return { api, db, config };
}
