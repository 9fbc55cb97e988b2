/**
 * A private, migrated database per test file, cloned from the run's template (see global-setup.ts).
 *
 *   import { createTestDatabase } from '../support/database.js';   // path relative to your test
 *   const db = await createTestDatabase();     // at the top level of the test file
 *   // db.url        -> DATABASE_URL for an app under test
 *   // db.prisma     -> a PrismaClient on it (created on first use, disconnected at the end)
 *   // db.name       -> the database name
 * The database is dropped in afterAll (WITH FORCE, so connections a test left open do not block it).
 */
import { randomBytes } from 'node:crypto';
import pg from 'pg';
import { afterAll, inject } from 'vitest';
import { createPrismaClient, type PrismaClient } from '@ausline/db';
import { TEST_DB_PREFIX, databaseUrlFor } from './env.js';
import { dropDatabase, withAdminClient } from './global-setup.js';

export interface TestDatabase {
  name: string;
  url: string;
  /** A PrismaClient on this database, created on first access; closed before the drop. */
  readonly prisma: PrismaClient;
  /** A pg pool on this database for raw SQL, created on first access; closed before the drop. */
  readonly pool: pg.Pool;
  /** Drops the database now (also done automatically in afterAll). Idempotent. */
  drop(): Promise<void>;
}

export interface CreateTestDatabaseOptions {
  /** Register afterAll(drop) automatically (default true). Set false when calling from inside a hook. */
  dropAfterAll?: boolean;
}

export async function createTestDatabase(options: CreateTestDatabaseOptions = {}): Promise<TestDatabase> {
  const template = inject('ausline_templateDb');
  if (!template) {
    throw new Error(
      'createTestDatabase(): no template database. Run the tests through the root vitest.config.ts ' +
        '(its globalSetup creates it), and do not set AUSLINE_TEST_SERVICES=off for tests that need Postgres.',
    );
  }
  const name = newDatabaseName();
  await cloneTemplate(template, name);
  return databaseHandle(name, options);
}

/**
 * An EMPTY database (no migrations applied), e.g. for migration-runner tests. Dropped in afterAll like
 * createTestDatabase's.
 */
export async function createEmptyDatabase(options: CreateTestDatabaseOptions = {}): Promise<TestDatabase> {
  const name = newDatabaseName();
  await withAdminClient((client) => client.query(`CREATE DATABASE "${name}"`));
  return databaseHandle(name, options);
}

function newDatabaseName(): string {
  // The run id starts with the epoch seconds: global-setup drops databases of runs that died long ago.
  const runId = inject('ausline_runId') || `${Math.floor(Date.now() / 1000)}_norun`;
  return `${TEST_DB_PREFIX}db_${runId}_${randomBytes(4).toString('hex')}`;
}

function databaseHandle(name: string, options: CreateTestDatabaseOptions): TestDatabase {
  const url = databaseUrlFor(name);

  let prisma: PrismaClient | undefined;
  let pool: pg.Pool | undefined;
  let dropped = false;
  const handle: TestDatabase = {
    name,
    url,
    get prisma() {
      prisma ??= createPrismaClient(url, { maxConnections: 5 });
      return prisma;
    },
    get pool() {
      if (!pool) {
        pool = new pg.Pool({ connectionString: url, max: 5 });
        // An idle connection that the server ends (the database dropped WITH (FORCE) by a teardown while this pool
        // still holds it: 57P01) makes the pool emit 'error'; with no listener that is an uncaught exception that
        // fails the whole run. Such a loss is harmless here; anything else is reported.
        pool.on('error', (error: Error & { code?: string }) => {
          if (error.code !== '57P01') console.warn(`test database ${name}: idle connection lost: ${error.message}`);
        });
      }
      return pool;
    },
    async drop() {
      if (dropped) return;
      dropped = true;
      await prisma?.$disconnect().catch(() => {});
      await pool?.end().catch(() => {});
      await dropDatabase(name);
    },
  };
  if (options.dropAfterAll !== false) afterAll(() => handle.drop());
  return handle;
}

async function cloneTemplate(template: string, name: string): Promise<void> {
  await withAdminClient(async (client) => {
    // CREATE DATABASE ... TEMPLATE fails while another session is connected to the template; nothing
    // connects to it after setup, but retry briefly in case a clone of another file is mid-flight.
    for (let attempt = 0; ; attempt++) {
      try {
        await client.query(`CREATE DATABASE "${name}" TEMPLATE "${template}"`);
        break;
      } catch (error) {
        const busy = error instanceof Error && /being accessed by other users/.test(error.message);
        if (!busy || attempt >= 20) throw error;
        await new Promise((resolve) => setTimeout(resolve, 100));
      }
    }
    // Test data need not survive a crash; skip waiting for the WAL flush on commit.
    await client.query(`ALTER DATABASE "${name}" SET synchronous_commit = off`);
  });
}
