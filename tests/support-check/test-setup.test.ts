/**
 * The test setup itself: it must stop at once, with the start commands, when a service is missing, and
 * it must hand each test file its own migrated database.
 */
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { createTestDatabase } from '../support/database.js';
import { requireServices } from '../support/global-setup.js';
import { browserTestFiles, INSTALL_CHROMIUM, requireChromium, runNeedsChromium } from '../support/chromium.js';
import { testQueuePrefix, deleteRedisKeys, createTestRedis } from '../support/redis.js';
import { adminDatabaseUrl, START_POSTGRES, START_REDIS, TEST_REDIS_URL } from '../support/env.js';
import pg from 'pg';

const root = fileURLToPath(new URL('../../', import.meta.url));

/** A whole `vitest run FILE` in a child process, with `env` on top of this one's. */
function vitestRun(file: string, env: Record<string, string>) {
  const run = spawnSync(process.execPath, [`${root}node_modules/vitest/vitest.mjs`, 'run', file], {
    cwd: root,
    encoding: 'utf8',
    env: { ...process.env, ...env, NO_COLOR: '1' },
    timeout: 60_000,
  });
  return { run, output: `${run.stdout}${run.stderr}` };
}

describe('service check', () => {
  it('passes when Postgres and Redis answer', async () => {
    await expect(requireServices()).resolves.toBeUndefined();
  });

  it('names each unreachable service with its exact start command, within the 2 s budget', async () => {
    const started = Date.now();
    const error = await requireServices('postgresql://postgres@127.0.0.1:1/postgres', 'redis://127.0.0.1:1').catch((e: Error) => e);
    expect(Date.now() - started).toBeLessThan(2_500);
    expect(error).toBeInstanceOf(Error);
    const message = (error as Error).message;
    expect(message).toContain('PostgreSQL at postgresql://postgres@127.0.0.1:1/postgres is not reachable');
    expect(message).toContain('pg_ctlcluster --skip-systemctl-redirect 15 main start');
    expect(message).toContain('Redis at redis://127.0.0.1:1 is not reachable');
    expect(message).toContain('redis-server --daemonize yes --bind 127.0.0.1 -::1 --port 6379 --save "" --appendonly no');
    expect(START_POSTGRES).toBe('pg_ctlcluster --skip-systemctl-redirect 15 main start');
    expect(START_REDIS).toBe('redis-server --daemonize yes --bind 127.0.0.1 -::1 --port 6379 --save "" --appendonly no');
  });

  it('reports only the missing one when the other is up', async () => {
    const message = await requireServices(adminDatabaseUrl(), 'redis://127.0.0.1:1').then(
      () => '',
      (e: Error) => e.message,
    );
    expect(message).toContain('Redis at');
    expect(message).not.toContain('PostgreSQL at');
  });

  it('a whole vitest run stops at once with the commands when Postgres is down', () => {
    const started = Date.now();
    const { run, output } = vitestRun('tests/compose/compose.test.ts', { TEST_DATABASE_URL: 'postgresql://postgres@127.0.0.1:1/postgres' });
    expect(run.status, output).not.toBe(0);
    expect(output).toContain(START_POSTGRES);
    expect(output).not.toContain('Tests  10 passed');
    // Not a minute of hook timeouts: vitest start-up plus the 2 s check.
    expect(Date.now() - started).toBeLessThan(20_000);
  }, 60_000);
});

describe('Chromium check', () => {
  it('passes for an executable and names the install command for a missing one', () => {
    expect(() => requireChromium(process.execPath)).not.toThrow();
    expect(() => requireChromium('/nonexistent/chromium')).toThrow(/Chromium at \/nonexistent\/chromium/);
    expect(() => requireChromium('/nonexistent/chromium')).toThrow(INSTALL_CHROMIUM);
    expect(INSTALL_CHROMIUM).toBe('apt-get update && apt-get install -y chromium');
  });

  it('knows which files drive Chromium, and asks for it only when the run includes one', () => {
    const files = browserTestFiles();
    expect(files).toContain('tests/browser/dashboard.test.ts');
    expect(files).toContain('tests/demo-day.test.ts');
    expect(files).not.toContain('tests/ingest-samples.test.ts');
    expect(runNeedsChromium([])).toBe(true);
    expect(runNeedsChromium(undefined)).toBe(true);
    expect(runNeedsChromium(['tests/browser'])).toBe(true);
    expect(runNeedsChromium(['./tests/browser/dashboard.test.ts'])).toBe(true);
    expect(runNeedsChromium([`${root}tests/demo-day.test.ts`])).toBe(true);
    expect(runNeedsChromium(['dashboard'])).toBe(true);
    expect(runNeedsChromium(['tests/ingest-samples.test.ts', 'tests/compose'])).toBe(false);
  });

  it('a vitest run of a browser test stops at once with the install command when Chromium is missing', () => {
    const started = Date.now();
    const { run, output } = vitestRun('tests/browser/chart-draw.test.ts', { CHROMIUM_PATH: '/nonexistent/chromium' });
    expect(run.status, output).not.toBe(0);
    expect(output).toContain('The browser tests need Chromium at /nonexistent/chromium');
    expect(output).toContain(INSTALL_CHROMIUM);
    // Stopped by the setup: no test file ran (a file that ran would report its tests).
    expect(output).not.toMatch(/Tests\s+\d+ (passed|failed)/);
    expect(Date.now() - started).toBeLessThan(20_000);
  }, 60_000);

  it('a run without browser tests does not ask for Chromium', () => {
    const { run, output } = vitestRun('tests/compose/compose.test.ts', { CHROMIUM_PATH: '/nonexistent/chromium' });
    expect(run.status, output).toBe(0);
    expect(output).not.toContain('need Chromium');
  }, 60_000);
});

describe('per-file databases and queue prefixes', () => {
  it('clones a migrated database that no other file shares, and drops it', async () => {
    const a = await createTestDatabase({ dropAfterAll: false });
    const b = await createTestDatabase({ dropAfterAll: false });
    expect(a.name).not.toBe(b.name);
    await a.prisma.line.create({ data: { code: 'ONLY-IN-A', name: 'a', timeZone: 'UTC' } });
    expect(await a.prisma.line.count()).toBe(1);
    expect(await b.prisma.line.count()).toBe(0);
    const { rows } = await b.pool.query<{ n: number }>('SELECT count(*)::int AS n FROM "_prisma_migrations" WHERE finished_at IS NOT NULL');
    expect(rows[0]!.n).toBeGreaterThanOrEqual(3);

    await a.drop();
    await b.drop();
    const admin = new pg.Client({ connectionString: adminDatabaseUrl() });
    await admin.connect();
    const left = await admin.query('SELECT 1 FROM pg_database WHERE datname = ANY($1)', [[a.name, b.name]]);
    await admin.end();
    expect(left.rowCount).toBe(0);
  });

  it('gives unique queue prefixes and removes their keys', async () => {
    const p1 = testQueuePrefix('x');
    const p2 = testQueuePrefix('x');
    expect(p1).not.toBe(p2);
    const redis = createTestRedis();
    await redis.set(`${p1}:k1`, '1');
    await redis.set(`${p1}:k2`, '2');
    await redis.set(`${p2}:k1`, '3');
    expect(await deleteRedisKeys(p1)).toBe(2);
    expect(await redis.get(`${p2}:k1`)).toBe('3');
    await deleteRedisKeys(p2);
    redis.disconnect();
    expect(TEST_REDIS_URL).toMatch(/^redis:/);
  });
});
