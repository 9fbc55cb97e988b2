/**
 * Where the tests find Postgres and Redis, and the environment an app under test gets.
 *
 * Postgres: TEST_DATABASE_URL (any database on the server; the tests only use its server part and
 * create their own databases), default postgresql://postgres@127.0.0.1:5432/postgres (trust auth).
 * Redis: TEST_REDIS_URL, default redis://127.0.0.1:6379.
 */
export const TEST_DATABASE_URL = process.env.TEST_DATABASE_URL ?? 'postgresql://postgres@127.0.0.1:5432/postgres';
export const TEST_REDIS_URL = process.env.TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';

/** Names of every database the test setup creates start with this, so stale ones can be found. */
export const TEST_DB_PREFIX = 'ausline_test_';
/** Template databases: `${TEST_DB_PREFIX}tpl_<epochSeconds>_<random>`. */
export const TEMPLATE_DB_PREFIX = `${TEST_DB_PREFIX}tpl_`;

/** Every Redis key the tests create starts with this (see redis.ts testQueuePrefix). */
export const REDIS_TEST_PREFIX = 'ausline-test:';

/** The connection string for database `name` on the test server. */
export function databaseUrlFor(name: string, base: string = TEST_DATABASE_URL): string {
  const url = new URL(base);
  url.pathname = `/${name}`;
  return url.toString();
}

/** URL of the server's maintenance database, for CREATE/DROP DATABASE. */
export function adminDatabaseUrl(): string {
  return databaseUrlFor(new URL(TEST_DATABASE_URL).pathname.slice(1) || 'postgres');
}

export const START_POSTGRES = 'pg_ctlcluster --skip-systemctl-redirect 15 main start';
export const START_REDIS = 'redis-server --daemonize yes --bind 127.0.0.1 -::1 --port 6379 --save "" --appendonly no';

/**
 * A complete environment for loadConfig / an app under test, pointing at the given database and a
 * per-test queue prefix. Override anything with `overrides`.
 */
export function testAppEnv(options: { databaseUrl: string; queuePrefix: string }, overrides: Record<string, string> = {}): Record<string, string> {
  return {
    DATABASE_URL: options.databaseUrl,
    REDIS_URL: TEST_REDIS_URL,
    QUEUE_PREFIX: options.queuePrefix,
    PORT: '0',
    LOG_LEVEL: 'error',
    PLANT_TIME_ZONE: 'UTC',
    SESSION_TTL_MIN: '60',
    ...overrides,
  };
}
