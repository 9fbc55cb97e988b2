import { execFileSync } from 'node:child_process';
import { cpSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import pg from 'pg';
import { afterAll, describe, expect, it } from 'vitest';
import {
  MigrationError,
  PRISMA_MIGRATION_LOCK_KEY,
  listMigrations,
  migrationChecksum,
  runMigrations,
} from '@ausline/db';
import { createEmptyDatabase } from '../support/database.js';

const REPO_MIGRATIONS = fileURLToPath(new URL('../../prisma/migrations', import.meta.url));
const scratchDirs: string[] = [];
afterAll(() => {
  for (const dir of scratchDirs) rmSync(dir, { recursive: true, force: true });
});

/** A migrations folder of our own: the repository's migrations plus `extra` ones. */
function migrationsDir(extra: Record<string, string> = {}, withRepoMigrations = true): string {
  const dir = mkdtempSync(join(tmpdir(), 'ausline-migrations-'));
  scratchDirs.push(dir);
  if (withRepoMigrations) cpSync(REPO_MIGRATIONS, dir, { recursive: true });
  for (const [name, sql] of Object.entries(extra)) writeMigration(dir, name, sql);
  return dir;
}

function writeMigration(dir: string, name: string, sql: string): void {
  mkdirSync(join(dir, name), { recursive: true });
  writeFileSync(join(dir, name, 'migration.sql'), sql);
}

async function query<T extends pg.QueryResultRow>(url: string, sql: string, params: unknown[] = []): Promise<T[]> {
  const client = new pg.Client({ connectionString: url });
  await client.connect();
  try {
    return (await client.query<T>(sql, params)).rows;
  } finally {
    await client.end();
  }
}

interface Row {
  id: string;
  checksum: string;
  migration_name: string;
  finished_at: Date | null;
  rolled_back_at: Date | null;
  logs: string | null;
  started_at: Date;
  applied_steps_count: number;
}
const historyOf = (url: string) => query<Row>(url, 'SELECT * FROM "_prisma_migrations" ORDER BY "started_at"');
const tableExists = async (url: string, table: string) =>
  (await query<{ ok: boolean }>(url, 'SELECT to_regclass($1) IS NOT NULL AS ok', [`"${table}"`]))[0]!.ok;

describe('migrationChecksum', () => {
  it('is the lowercase SHA-256 hex Prisma stores', () => {
    // Test vector from prisma-engines schema-connector/src/checksum.rs (SHA-256 of "hello").
    expect(migrationChecksum('hello')).toBe('2cf24dba5fb0a30e26e83b2ac5b9e29e1b161e5c1fa7425e73043362938b9824');
  });

  it('equals sha256sum of the migration file bytes', () => {
    for (const migration of listMigrations(REPO_MIGRATIONS)) {
      const coreutils = execFileSync('sha256sum', [migration.path], { encoding: 'utf8' }).split(' ')[0];
      expect(migration.checksum).toBe(coreutils);
    }
  });
});

describe('runMigrations on the repository migrations', () => {
  it('applies every migration to a fresh database, recording rows as prisma migrate deploy does, and a rerun applies nothing', async () => {
    const db = await createEmptyDatabase();
    const expected = listMigrations(REPO_MIGRATIONS);
    expect(expected.length).toBeGreaterThanOrEqual(2);

    const first = await runMigrations(db.url, REPO_MIGRATIONS);
    expect(first.applied).toEqual(expected.map((m) => m.name));
    expect(first.alreadyApplied).toEqual([]);

    const rows = await historyOf(db.url);
    expect(rows.map((r) => r.migration_name)).toEqual(expected.map((m) => m.name));
    for (const [i, row] of rows.entries()) {
      expect(row.checksum).toMatch(/^[0-9a-f]{64}$/);
      expect(row.checksum).toBe(expected[i]!.checksum);
      expect(row.id).toMatch(/^[0-9a-f-]{36}$/);
      expect(row.applied_steps_count).toBe(1);
      expect(row.finished_at).toBeInstanceOf(Date);
      expect(row.finished_at!.getTime()).toBeGreaterThanOrEqual(row.started_at.getTime());
      expect(row.rolled_back_at).toBeNull();
      expect(row.logs).toBeNull();
    }
    expect(await tableExists(db.url, 'Batch')).toBe(true);

    const second = await runMigrations(db.url, REPO_MIGRATIONS);
    expect(second.applied).toEqual([]);
    expect(second.alreadyApplied).toEqual(expected.map((m) => m.name));
    expect(await historyOf(db.url)).toHaveLength(expected.length);
  });

  it('creates _prisma_migrations with the columns and types of Prisma\'s own DDL', async () => {
    // Columns as created by prisma-engines (sql-schema-connector, postgres flavour, create_migrations_table).
    const db = await createEmptyDatabase();
    await runMigrations(db.url, REPO_MIGRATIONS);
    const columns = await query<{ column_name: string; data_type: string; is_nullable: string; len: number | null }>(
      db.url,
      `SELECT column_name, data_type, is_nullable, character_maximum_length AS len
         FROM information_schema.columns WHERE table_name = '_prisma_migrations' ORDER BY ordinal_position`,
    );
    expect(columns).toEqual([
      { column_name: 'id', data_type: 'character varying', is_nullable: 'NO', len: 36 },
      { column_name: 'checksum', data_type: 'character varying', is_nullable: 'NO', len: 64 },
      { column_name: 'finished_at', data_type: 'timestamp with time zone', is_nullable: 'YES', len: null },
      { column_name: 'migration_name', data_type: 'character varying', is_nullable: 'NO', len: 255 },
      { column_name: 'logs', data_type: 'text', is_nullable: 'YES', len: null },
      { column_name: 'rolled_back_at', data_type: 'timestamp with time zone', is_nullable: 'YES', len: null },
      { column_name: 'started_at', data_type: 'timestamp with time zone', is_nullable: 'NO', len: null },
      { column_name: 'applied_steps_count', data_type: 'integer', is_nullable: 'NO', len: null },
    ]);
  });
});

describe('runMigrations safety', () => {
  it('two runs at once apply each migration exactly once', async () => {
    const db = await createEmptyDatabase();
    // A slow extra migration keeps the first runner inside the lock while the second one waits.
    const dir = migrationsDir({ '20991231000000_slow': 'SELECT pg_sleep(0.4);\nCREATE TABLE "SlowOne" ("id" INTEGER);\n' });
    const total = listMigrations(dir).length;

    const [a, b] = await Promise.all([runMigrations(db.url, dir), runMigrations(db.url, dir)]);
    expect(a.applied.length + b.applied.length).toBe(total);
    expect([a.applied.length, b.applied.length].sort()).toEqual([0, total]);
    const rows = await historyOf(db.url);
    expect(rows).toHaveLength(total);
    expect(new Set(rows.map((r) => r.migration_name)).size).toBe(total);
  });

  it('refuses to go on when an applied migration was edited, naming it, and applies nothing after it', async () => {
    const db = await createEmptyDatabase();
    const dir = migrationsDir({ '20991231000000_first': 'CREATE TABLE "First" ("id" INTEGER);\n' });
    await runMigrations(db.url, dir);

    writeMigration(dir, '20991231000000_first', 'CREATE TABLE "First" ("id" BIGINT);\n');
    writeMigration(dir, '20991231000100_second', 'CREATE TABLE "Second" ("id" INTEGER);\n');
    const error = await runMigrations(db.url, dir).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(MigrationError);
    expect((error as MigrationError).migrationName).toBe('20991231000000_first');
    expect((error as Error).message).toMatch(/20991231000000_first.*edited/);
    expect(await tableExists(db.url, 'Second')).toBe(false);
  });

  it('accepts an applied migration whose only change is CRLF line endings (as Prisma does)', async () => {
    const db = await createEmptyDatabase();
    const sql = 'CREATE TABLE "Crlf" ("id" INTEGER);\nCREATE TABLE "Crlf2" ("id" INTEGER);\n';
    const dir = migrationsDir({ '20991231000000_crlf': sql }, false);
    await runMigrations(db.url, dir);
    writeMigration(dir, '20991231000000_crlf', sql.replace(/\n/g, '\r\n'));
    const result = await runMigrations(db.url, dir);
    expect(result.applied).toEqual([]);
    expect(result.alreadyApplied).toEqual(['20991231000000_crlf']);
  });

  it('rolls back a failing migration completely and leaves no row; fixed, it applies on the next run', async () => {
    const db = await createEmptyDatabase();
    const broken = 'CREATE TABLE "Half" ("id" INTEGER);\nINSERT INTO "Half" VALUES (1);\nSELECT * FROM "NoSuchTable";\n';
    const dir = migrationsDir({ '20991231000000_broken': broken, '20991231000100_after': 'CREATE TABLE "After" ("id" INTEGER);\n' });

    const error = await runMigrations(db.url, dir).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(MigrationError);
    expect((error as MigrationError).migrationName).toBe('20991231000000_broken');
    expect((error as Error).message).toMatch(/"NoSuchTable" does not exist.*42P01.*line 3/);

    const rows = await historyOf(db.url);
    expect(rows.map((r) => r.migration_name)).toEqual(listMigrations(REPO_MIGRATIONS).map((m) => m.name));
    expect(await tableExists(db.url, 'Half')).toBe(false);
    expect(await tableExists(db.url, 'After')).toBe(false);

    writeMigration(dir, '20991231000000_broken', 'CREATE TABLE "Half" ("id" INTEGER);\n');
    const retry = await runMigrations(db.url, dir);
    expect(retry.applied).toEqual(['20991231000000_broken', '20991231000100_after']);
    expect(await tableExists(db.url, 'Half')).toBe(true);
  });

  it('applies a file with a dollar-quoted function body as one script', async () => {
    const db = await createEmptyDatabase();
    const dir = migrationsDir(
      {
        '20991231000000_fn': `CREATE FUNCTION "twice"(x INTEGER) RETURNS INTEGER LANGUAGE plpgsql AS $$
BEGIN
  RETURN x * 2; -- a semicolon inside the body
END;
$$;
`,
      },
      false,
    );
    await runMigrations(db.url, dir);
    expect((await query<{ v: number }>(db.url, 'SELECT "twice"(21) AS v'))[0]!.v).toBe(42);
  });

  it('refuses a non-empty database that has no migration history', async () => {
    const db = await createEmptyDatabase();
    await query(db.url, 'CREATE TABLE "Existing" ("id" INTEGER)');
    await expect(runMigrations(db.url, REPO_MIGRATIONS)).rejects.toThrow(/not empty.*"Existing"/);
    expect(await tableExists(db.url, '_prisma_migrations')).toBe(false);
  });

  it('refuses when prisma migrate deploy left an unresolved failed attempt', async () => {
    const db = await createEmptyDatabase();
    await runMigrations(db.url, REPO_MIGRATIONS);
    await query(
      db.url,
      `INSERT INTO "_prisma_migrations" ("id", "checksum", "migration_name", "logs") VALUES ($1, $2, $3, $4)`,
      ['00000000-0000-4000-8000-000000000001', 'f'.repeat(64), '20991231000000_failed_by_prisma', 'syntax error'],
    );
    await expect(runMigrations(db.url, REPO_MIGRATIONS)).rejects.toThrow(/20991231000000_failed_by_prisma.*failed earlier/);
  });

  it('gives up with a clear error when another session holds the migration lock too long', async () => {
    const db = await createEmptyDatabase();
    const holder = new pg.Client({ connectionString: db.url });
    await holder.connect();
    try {
      await holder.query('SELECT pg_advisory_lock($1)', [PRISMA_MIGRATION_LOCK_KEY]);
      await expect(runMigrations(db.url, REPO_MIGRATIONS, { lockTimeoutMs: 300 })).rejects.toThrow(/Timed out.*migration lock/);
      expect(await tableExists(db.url, '_prisma_migrations')).toBe(false);
    } finally {
      await holder.end();
    }
  });

  it('rejects migration folders that do not follow <timestamp>_<name>', () => {
    const dir = migrationsDir({}, false);
    writeMigration(dir, 'add-stuff', 'SELECT 1;');
    expect(() => listMigrations(dir)).toThrow(/"add-stuff" does not match/);
  });

  it('keeps the repository migrations named and ordered correctly', () => {
    const names = listMigrations(REPO_MIGRATIONS).map((m) => m.name);
    expect(names[0]).toBe('20261201000000_init');
    expect([...names].sort()).toEqual(names);
    expect(readFileSync(join(REPO_MIGRATIONS, 'migration_lock.toml'), 'utf8')).toMatch(/provider = "postgresql"/);
  });
});
