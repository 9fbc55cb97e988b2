/**
 * Vitest globalSetup (registered in the root vitest.config.ts), once per `vitest run`:
 * 1. checks that Postgres and Redis answer within 2 s, and that Chromium is installed when the run includes
 *    browser tests; if not, stops the run at once and prints the commands that start or install them
 *    (instead of a minute of hook timeouts later);
 * 2. drops test databases left behind by crashed runs (by name prefix and age);
 * 3. creates a template database and applies prisma/migrations to it; each test file clones it with
 *    createTestDatabase() (tests/support/database.ts);
 * 4. at the end drops the template and anything this run left.
 *
 * Runs that only touch the pure libraries (`vitest run libs/metallurgy`, `libs/compliance`, `libs/contracts`), or with
 * AUSLINE_TEST_SERVICES=off, skip all of this.
 */
import { randomBytes } from 'node:crypto';
import { createConnection } from 'node:net';
import { fileURLToPath } from 'node:url';
import { Redis } from 'ioredis';
import pg from 'pg';
import type { TestProject } from 'vitest/node';
import { runMigrations } from '../../libs/db/src/migrate/run-migrations.js';
import { requireChromium, runNeedsChromium } from './chromium.js';
import {
  REDIS_TEST_PREFIX,
  START_POSTGRES,
  START_REDIS,
  TEMPLATE_DB_PREFIX,
  TEST_DB_PREFIX,
  TEST_REDIS_URL,
  adminDatabaseUrl,
  databaseUrlFor,
} from './env.js';

declare module 'vitest' {
  export interface ProvidedContext {
    /** Name of this run's migrated template database; '' when the services were skipped. */
    ausline_templateDb: string;
    /** Random id of this run, used in database names and queue prefixes. */
    ausline_runId: string;
  }
}

const REACH_TIMEOUT_MS = 2_000;
/** Databases of other runs older than this are assumed abandoned (a crashed or killed run). */
const STALE_AFTER_S = 2 * 60 * 60;
const MIGRATIONS_DIR = fileURLToPath(new URL('../../prisma/migrations', import.meta.url));
const PURE_FILTER = /^(\.\/)?libs\/(metallurgy|compliance|contracts)(\/|$)/;

export default async function setup(project: TestProject): Promise<(() => Promise<void>) | void> {
  const runId = `${Math.floor(Date.now() / 1000)}_${randomBytes(3).toString('hex')}`;
  project.provide('ausline_runId', runId);
  project.provide('ausline_templateDb', '');

  // filenamePattern holds the CLI filters (vitest internal, read defensively).
  const filters = (project.vitest as unknown as { filenamePattern?: string[] }).filenamePattern;
  const pureOnly = Array.isArray(filters) && filters.length > 0 && filters.every((f) => PURE_FILTER.test(f));
  if (process.env.AUSLINE_TEST_SERVICES === 'off' || pureOnly) return;

  // Browser tests need Chromium: checked first, it costs nothing and saves building a template for nothing.
  if (runNeedsChromium(filters)) requireChromium();
  await requireServices();
  await dropStaleTestDatabases();
  await deleteStaleRedisKeys().catch(() => {});

  const templateDb = `${TEMPLATE_DB_PREFIX}${runId}`;
  await withAdminClient((client) => client.query(`CREATE DATABASE "${templateDb}"`));
  try {
    await runMigrations(databaseUrlFor(templateDb), MIGRATIONS_DIR);
  } catch (error) {
    await dropDatabase(templateDb);
    throw error;
  }
  project.provide('ausline_templateDb', templateDb);

  return async () => {
    // Test files drop their own databases in afterAll; this catches files that crashed.
    const names = await listTestDatabases();
    for (const { name } of names) {
      if (name === templateDb || name.includes(runId)) await dropDatabase(name);
    }
    await deleteRedisKeys(`${REDIS_TEST_PREFIX}${runId}:`).catch(() => {});
  };
}

/** Fails with the start commands when Postgres or Redis cannot be reached within 2 s. */
export async function requireServices(
  databaseUrl: string = adminDatabaseUrl(),
  redisUrl: string = TEST_REDIS_URL,
): Promise<void> {
  const [pgProblem, redisProblem] = await Promise.all([checkPostgres(databaseUrl), checkRedis(redisUrl)]);
  if (!pgProblem && !redisProblem) return;
  const lines = ['The tests need a running PostgreSQL and Redis.'];
  if (pgProblem) {
    lines.push(
      `PostgreSQL at ${redactUrl(databaseUrl)} is not reachable (${pgProblem}). Start it with:`,
      `    ${START_POSTGRES}`,
    );
  }
  if (redisProblem) {
    lines.push(`Redis at ${redactUrl(redisUrl)} is not reachable (${redisProblem}). Start it with:`, `    ${START_REDIS}`);
  }
  lines.push('Elsewhere point TEST_DATABASE_URL / TEST_REDIS_URL at your servers.');
  const error = new Error(lines.join('\n'));
  error.stack = error.message; // the stack adds nothing here
  throw error;
}

async function checkPostgres(databaseUrl: string): Promise<string | undefined> {
  const client = new pg.Client({
    connectionString: databaseUrl,
    connectionTimeoutMillis: REACH_TIMEOUT_MS,
    query_timeout: REACH_TIMEOUT_MS,
  });
  client.on('error', () => {});
  try {
    await client.connect();
    await client.query('SELECT 1');
    return undefined;
  } catch (error) {
    return error instanceof Error ? error.message || error.name : String(error);
  } finally {
    await client.end().catch(() => {});
  }
}

/** A raw PING over TCP: no client library retry loops, a hard 2 s limit. */
function checkRedis(redisUrl: string): Promise<string | undefined> {
  const url = new URL(redisUrl);
  const host = url.hostname.replace(/^\[|\]$/g, '') || '127.0.0.1';
  const port = Number(url.port || 6379);
  return new Promise((resolve) => {
    const socket = createConnection({ host, port });
    let answer = '';
    const finish = (problem: string | undefined) => {
      clearTimeout(timer);
      socket.destroy();
      resolve(problem);
    };
    const timer = setTimeout(() => finish(`no answer within ${REACH_TIMEOUT_MS} ms`), REACH_TIMEOUT_MS);
    socket.on('connect', () => {
      const auth = url.password ? `AUTH ${decodeURIComponent(url.password)}\r\n` : '';
      socket.write(`${auth}PING\r\n`);
    });
    socket.on('data', (chunk) => {
      answer += chunk.toString('utf8');
      if (answer.includes('+PONG')) finish(undefined);
      else if (answer.includes('-')) finish(`answered ${answer.trim()}`);
    });
    socket.on('error', (error) => finish(error.message || (error as NodeJS.ErrnoException).code || 'connection error'));
  });
}

function redactUrl(url: string): string {
  const parsed = new URL(url);
  if (parsed.password) parsed.password = '***';
  return parsed.toString();
}

export async function withAdminClient<T>(work: (client: pg.Client) => Promise<T>): Promise<T> {
  const client = new pg.Client({ connectionString: adminDatabaseUrl(), connectionTimeoutMillis: 5_000 });
  client.on('error', () => {});
  await client.connect();
  try {
    return await work(client);
  } finally {
    await client.end().catch(() => {});
  }
}

export async function dropDatabase(name: string): Promise<void> {
  // WITH (FORCE) ends sessions a test forgot to close (PostgreSQL 13+).
  await withAdminClient((client) => client.query(`DROP DATABASE IF EXISTS "${name.replace(/"/g, '""')}" WITH (FORCE)`));
}

async function listTestDatabases(): Promise<Array<{ name: string }>> {
  return withAdminClient(async (client) => {
    const { rows } = await client.query<{ name: string }>(
      `SELECT datname AS name FROM pg_database WHERE datname LIKE $1 ORDER BY datname`,
      [`${TEST_DB_PREFIX}%`],
    );
    return rows;
  });
}

/**
 * Every test database name carries its creation time in epoch seconds right after the prefix
 * (`ausline_test_<kind>_<epochS>_...`); those older than STALE_AFTER_S belong to dead runs.
 */
async function dropStaleTestDatabases(): Promise<void> {
  const nowS = Date.now() / 1000;
  for (const { name } of await listTestDatabases()) {
    const epoch = /^ausline_test_[a-z]+_(\d{10})_/.exec(name)?.[1];
    if (epoch !== undefined && nowS - Number(epoch) > STALE_AFTER_S) {
      await dropDatabase(name).catch(() => {});
    }
  }
}

/** Deletes every Redis key under `prefix` (SCAN, never KEYS); returns how many. */
export async function deleteRedisKeys(prefix: string, matches: (key: string) => boolean = () => true): Promise<number> {
  const redis = new Redis(TEST_REDIS_URL, { maxRetriesPerRequest: 1, connectTimeout: 2_000 });
  let deleted = 0;
  try {
    let cursor = '0';
    do {
      const [next, keys] = await redis.scan(cursor, 'MATCH', `${prefix}*`, 'COUNT', 1000);
      cursor = next;
      const doomed = keys.filter(matches);
      if (doomed.length > 0) deleted += await redis.del(...doomed);
    } while (cursor !== '0');
  } finally {
    redis.disconnect();
  }
  return deleted;
}

/** Queue keys of runs that died long ago: `ausline-test:<epochS>_<hex>:...`. */
async function deleteStaleRedisKeys(): Promise<void> {
  const nowS = Date.now() / 1000;
  await deleteRedisKeys(REDIS_TEST_PREFIX, (key) => {
    const epoch = /^ausline-test:(\d{10})_/.exec(key)?.[1];
    return epoch !== undefined && nowS - Number(epoch) > STALE_AFTER_S;
  });
}
