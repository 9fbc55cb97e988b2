/**
 * `npm run db:migrate` as an operator runs it (issue 2, item 4): the npm script and its bin
 * (libs/db/src/bin/migrate.ts) in a child process, not runMigrations() in this one. The runner's finer
 * behaviour (locks, checksums, rollbacks) is tested in run-migrations.test.ts.
 */
import { execFile } from 'node:child_process';
import { cpSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createEmptyDatabase, type TestDatabase } from '../support/database.js';

const REPO = fileURLToPath(new URL('../..', import.meta.url));
const REPO_MIGRATIONS = join(REPO, 'prisma/migrations');
const MIGRATION_NAMES = readdirSync(REPO_MIGRATIONS, { withFileTypes: true })
  .filter((entry) => entry.isDirectory())
  .map((entry) => entry.name)
  .sort();

interface CommandResult {
  code: number;
  stdout: string;
  stderr: string;
}

/** Runs `npm run db:migrate` with DATABASE_URL (and MIGRATIONS_DIR when given); never throws. */
function dbMigrate(databaseUrl: string, migrationsDir?: string): Promise<CommandResult> {
  const env: NodeJS.ProcessEnv = { ...process.env, DATABASE_URL: databaseUrl };
  delete env.MIGRATIONS_DIR;
  if (migrationsDir) env.MIGRATIONS_DIR = migrationsDir;
  return new Promise((resolve) => {
    execFile('npm', ['run', '--silent', 'db:migrate'], { cwd: REPO, env, encoding: 'utf8', timeout: 60_000 }, (error, stdout, stderr) => {
      const code = error ? (typeof error.code === 'number' ? error.code : -1) : 0;
      resolve({ code, stdout, stderr });
    });
  });
}

let db: TestDatabase;
let first: CommandResult;
let second: CommandResult;
let edited: CommandResult;
let editedDir = '';
const appliedCount = async () =>
  (await db.pool.query<{ n: number }>('SELECT count(*)::int AS n FROM "_prisma_migrations" WHERE finished_at IS NOT NULL')).rows[0]!.n;
let afterFirst = 0;
let afterSecond = 0;

beforeAll(async () => {
  db = await createEmptyDatabase();
  first = await dbMigrate(db.url);
  afterFirst = await appliedCount();
  second = await dbMigrate(db.url);
  afterSecond = await appliedCount();

  // The same migrations with the first one edited after it was applied.
  editedDir = mkdtempSync(join(tmpdir(), 'ausline-migrate-command-'));
  cpSync(REPO_MIGRATIONS, editedDir, { recursive: true });
  writeFileSync(join(editedDir, MIGRATION_NAMES[0]!, 'migration.sql'), '-- edited after it was applied\nSELECT 1;\n', { flag: 'a' });
  edited = await dbMigrate(db.url, editedDir);
}, 120_000);
afterAll(() => {
  if (editedDir) rmSync(editedDir, { recursive: true, force: true });
});

describe('npm run db:migrate', () => {
  it('migrates an empty database: every repository migration, logged, exit 0', async () => {
    expect(first.code, first.stderr).toBe(0);
    expect(afterFirst).toBe(MIGRATION_NAMES.length);
    for (const name of MIGRATION_NAMES) expect(first.stdout).toContain(`db:migrate: applying ${name}`);
    expect(first.stdout).toContain(`db:migrate: applied ${MIGRATION_NAMES.length} migration(s)`);
    const { rows } = await db.pool.query<{ ok: boolean }>(`SELECT to_regclass('"Batch"') IS NOT NULL AS ok`);
    expect(rows[0]!.ok).toBe(true);
  });

  it('is a no-op the second time', () => {
    expect(second.code, second.stderr).toBe(0);
    expect(second.stdout).toContain('db:migrate: database is up to date');
    expect(second.stdout).not.toContain('applying');
    expect(afterSecond).toBe(afterFirst);
  });

  it('exits non-zero with a clear message, naming the migration, when an applied one was edited', () => {
    expect(edited.code).toBe(1);
    expect(edited.stderr).toContain(`db:migrate: Migration "${MIGRATION_NAMES[0]}" was edited after it was applied`);
    expect(edited.stderr).toContain('restore the file and add a new migration');
    expect(edited.stdout).not.toContain('applying');
  });

  it('exits 2 and says what to set when DATABASE_URL is missing', async () => {
    const run = await dbMigrate('');
    expect(run.code).toBe(2);
    expect(run.stderr).toContain('db:migrate: DATABASE_URL is not set');
  });
});
