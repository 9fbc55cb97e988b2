import { createHash, randomUUID } from 'node:crypto';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import pg from 'pg';

/**
 * Offline replacement for `prisma migrate deploy` (the Prisma CLI cannot run its schema engine here).
 *
 * It writes the same `_prisma_migrations` rows Prisma does, so either tool can take over from the other:
 * same table DDL, checksum = SHA-256 hex of the migration.sql bytes, `applied_steps_count` 1 and
 * `finished_at` set on success, the same advisory lock key (so this runner and a real Prisma CLI exclude
 * each other).
 *
 * Deliberate differences from Prisma, both stricter:
 * - each migration runs in ONE transaction together with its bookkeeping row, so a failing migration
 *   leaves neither schema changes nor a row behind (Prisma leaves a failed row that blocks the next
 *   deploy until someone resolves it);
 * - an applied migration whose file changed (checksum differs) stops the run before anything is applied
 *   (Prisma's deploy does not compare checksums at all).
 * Consequence of the single transaction: a migration may not contain its own BEGIN/COMMIT, nor statements
 * that refuse to run in a transaction block (CREATE INDEX CONCURRENTLY, ALTER TYPE ... ADD VALUE used in
 * the same file).
 */

/** Prisma's advisory lock key (prisma-engines, schema-engine postgres flavour). */
export const PRISMA_MIGRATION_LOCK_KEY = 72707369;

const MIGRATIONS_TABLE_DDL = `CREATE TABLE IF NOT EXISTS "_prisma_migrations" (
    "id"                    VARCHAR(36) PRIMARY KEY NOT NULL,
    "checksum"              VARCHAR(64) NOT NULL,
    "finished_at"           TIMESTAMPTZ,
    "migration_name"        VARCHAR(255) NOT NULL,
    "logs"                  TEXT,
    "rolled_back_at"        TIMESTAMPTZ,
    "started_at"            TIMESTAMPTZ NOT NULL DEFAULT now(),
    "applied_steps_count"   INTEGER NOT NULL DEFAULT 0
)`;

const MIGRATION_NAME = /^\d{14}_[a-z0-9_]+$/;

export interface MigrationFile {
  /** Directory name, e.g. 20261201000000_init; also the `migration_name` recorded. */
  name: string;
  path: string;
  sql: string;
  /** Lowercase hex SHA-256 of the file's bytes, as Prisma computes it. */
  checksum: string;
}

export interface RunMigrationsOptions {
  /** How long to wait for another runner's lock before giving up (default 10 s, as Prisma). */
  lockTimeoutMs?: number;
  /** Progress lines; default silent. */
  log?: (line: string) => void;
}

export interface RunMigrationsResult {
  /** Migrations applied by this call, in order. */
  applied: string[];
  /** Migrations found already applied. */
  alreadyApplied: string[];
  /** Non-fatal findings, e.g. a migration recorded in the database but missing on disk. */
  warnings: string[];
}

export class MigrationError extends Error {
  constructor(
    message: string,
    /** The migration the error is about, when there is one. */
    readonly migrationName?: string,
  ) {
    super(message);
    this.name = 'MigrationError';
  }
}

/** SHA-256 of the file's bytes, lowercase hex, 64 characters: what Prisma stores as `checksum`. */
export function migrationChecksum(contents: string | Buffer): string {
  return createHash('sha256').update(contents).digest('hex');
}

/**
 * Prisma accepts an applied checksum that matches the file as is, or with its line endings converted
 * either way (a checkout on Windows must not look like an edit). We do the same.
 */
function checksumMatches(recorded: string, file: Buffer): boolean {
  const text = file.toString('utf8');
  const candidates = [
    migrationChecksum(file),
    migrationChecksum(text.replace(/\r\n/g, '\n')),
    migrationChecksum(text.replace(/\r?\n/g, '\r\n')),
  ];
  return candidates.includes(recorded.toLowerCase());
}

/** Reads `<dir>/<name>/migration.sql` for every migration directory, sorted by name. */
export function listMigrations(migrationsDir: string): MigrationFile[] {
  if (!existsSync(migrationsDir)) {
    throw new MigrationError(`Migrations directory not found: ${migrationsDir}`);
  }
  const lockFile = join(migrationsDir, 'migration_lock.toml');
  if (existsSync(lockFile)) {
    const provider = /^\s*provider\s*=\s*"([^"]+)"/m.exec(readFileSync(lockFile, 'utf8'))?.[1];
    if (provider !== undefined && provider !== 'postgresql') {
      throw new MigrationError(`${lockFile} says provider "${provider}"; this runner only applies postgresql migrations`);
    }
  }
  const names = readdirSync(migrationsDir, { withFileTypes: true })
    .filter((entry) => entry.isDirectory())
    .map((entry) => entry.name)
    // Code-point order; the 14-digit timestamp prefix makes it the order of creation.
    .sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
  return names.map((name) => {
    if (!MIGRATION_NAME.test(name)) {
      throw new MigrationError(
        `Migration directory "${name}" does not match <14-digit timestamp>_<snake_case_name>`,
        name,
      );
    }
    const path = join(migrationsDir, name, 'migration.sql');
    if (!existsSync(path)) throw new MigrationError(`Migration "${name}" has no migration.sql`, name);
    const bytes = readFileSync(path);
    return { name, path, sql: bytes.toString('utf8'), checksum: migrationChecksum(bytes) };
  });
}

interface MigrationRow {
  id: string;
  migration_name: string;
  checksum: string;
  finished_at: Date | null;
  rolled_back_at: Date | null;
  logs: string | null;
}

/**
 * Applies every pending migration of `migrationsDir` to the database at `databaseUrl`, in name order,
 * each in its own transaction, while holding Prisma's advisory lock. Safe to run from several processes
 * at once: one applies, the others wait for the lock and then find nothing pending.
 */
export async function runMigrations(
  databaseUrl: string,
  migrationsDir: string,
  options: RunMigrationsOptions = {},
): Promise<RunMigrationsResult> {
  const log = options.log ?? (() => {});
  const migrations = listMigrations(migrationsDir);
  // One dedicated session: advisory locks belong to the session, so no pool.
  const client = new pg.Client({ connectionString: databaseUrl, connectionTimeoutMillis: 5_000 });
  // An idle session error (server restart) must not crash the process; the next query reports it.
  client.on('error', () => {});
  await client.connect();
  let locked = false;
  try {
    await acquireLock(client, options.lockTimeoutMs ?? 10_000);
    locked = true;
    await ensureMigrationsTable(client, migrations);

    const { rows } = await client.query<MigrationRow>(
      `SELECT "id", "migration_name", "checksum", "finished_at", "rolled_back_at", "logs"
         FROM "_prisma_migrations" ORDER BY "started_at"`,
    );

    // A failed attempt left by `prisma migrate deploy` (ours never leaves one): Prisma's P3009.
    const failed = rows.filter((row) => row.finished_at === null && row.rolled_back_at === null);
    if (failed.length > 0) {
      const first = failed[0]!;
      throw new MigrationError(
        `Migration "${first.migration_name}" failed earlier and was not resolved` +
          (first.logs ? ` (logs: ${first.logs.trim().split('\n')[0]})` : '') +
          `. Fix the database, then mark it rolled back: UPDATE "_prisma_migrations" SET "rolled_back_at" = now() ` +
          `WHERE "id" = '${first.id}'; or run \`prisma migrate resolve --rolled-back ${first.migration_name}\` where the Prisma CLI works.`,
        first.migration_name,
      );
    }

    const appliedRows = new Map<string, MigrationRow>();
    for (const row of rows) if (row.rolled_back_at === null) appliedRows.set(row.migration_name, row);

    // Refuse before applying anything if history was edited.
    const warnings: string[] = [];
    for (const migration of migrations) {
      const row = appliedRows.get(migration.name);
      if (row && !checksumMatches(row.checksum, readFileSync(migration.path))) {
        throw new MigrationError(
          `Migration "${migration.name}" was edited after it was applied (recorded checksum ${row.checksum}, ` +
            `file checksum ${migration.checksum}). Never edit an applied migration: restore the file and add a new migration.`,
          migration.name,
        );
      }
    }
    const onDisk = new Set(migrations.map((m) => m.name));
    for (const name of appliedRows.keys()) {
      if (!onDisk.has(name)) {
        warnings.push(`Migration "${name}" is recorded in the database but missing from ${migrationsDir}`);
      }
    }

    const applied: string[] = [];
    const alreadyApplied: string[] = [];
    for (const migration of migrations) {
      if (appliedRows.has(migration.name)) {
        alreadyApplied.push(migration.name);
        continue;
      }
      log(`applying ${migration.name}`);
      await applyOne(client, migration);
      applied.push(migration.name);
    }
    for (const warning of warnings) log(`warning: ${warning}`);
    log(applied.length === 0 ? 'database is up to date' : `applied ${applied.length} migration(s)`);
    return { applied, alreadyApplied, warnings };
  } finally {
    try {
      if (locked) await client.query('SELECT pg_advisory_unlock($1)', [PRISMA_MIGRATION_LOCK_KEY]);
    } finally {
      await client.end().catch(() => {});
    }
  }
}

async function acquireLock(client: pg.Client, timeoutMs: number): Promise<void> {
  // Poll pg_try_advisory_lock rather than block in pg_advisory_lock, so the timeout and its message are ours.
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const { rows } = await client.query<{ locked: boolean }>('SELECT pg_try_advisory_lock($1) AS locked', [
      PRISMA_MIGRATION_LOCK_KEY,
    ]);
    if (rows[0]?.locked) return;
    if (Date.now() >= deadline) {
      throw new MigrationError(
        `Timed out after ${timeoutMs} ms waiting for the migration lock (pg_advisory_lock ${PRISMA_MIGRATION_LOCK_KEY}); ` +
          'another migration run (this runner or the Prisma CLI) holds it.',
      );
    }
    await new Promise((resolve) => setTimeout(resolve, 100));
  }
}

async function ensureMigrationsTable(client: pg.Client, migrations: MigrationFile[]): Promise<void> {
  const { rows } = await client.query<{ exists: boolean }>(
    `SELECT to_regclass('"_prisma_migrations"') IS NOT NULL AS "exists"`,
  );
  if (rows[0]?.exists) return;
  // Prisma's P3005: a schema that already holds tables but no migration history needs baselining,
  // not a blind re-run of the init migration.
  const { rows: tables } = await client.query<{ name: string }>(
    `SELECT c.relname AS name FROM pg_class c JOIN pg_namespace n ON n.oid = c.relnamespace
      WHERE n.nspname = current_schema() AND c.relkind IN ('r', 'p', 'v', 'm') LIMIT 5`,
  );
  if (tables.length > 0 && migrations.length > 0) {
    throw new MigrationError(
      `The database schema is not empty (found ${tables.map((t) => `"${t.name}"`).join(', ')}) but has no ` +
        '_prisma_migrations table; refusing to apply migrations over an unknown schema.',
    );
  }
  await client.query(MIGRATIONS_TABLE_DDL);
}

async function applyOne(client: pg.Client, migration: MigrationFile): Promise<void> {
  const id = randomUUID();
  await client.query('BEGIN');
  try {
    await client.query(
      `INSERT INTO "_prisma_migrations" ("id", "checksum", "started_at", "migration_name")
       VALUES ($1, $2, clock_timestamp(), $3)`,
      [id, migration.checksum, migration.name],
    );
    // No parameters: node-postgres then uses the simple query protocol, which accepts a whole
    // multi-statement file (dollar-quoted function bodies included) without splitting it.
    await client.query(migration.sql);
    await client.query(
      `UPDATE "_prisma_migrations"
          SET "applied_steps_count" = "applied_steps_count" + 1, "finished_at" = clock_timestamp()
        WHERE "id" = $1`,
      [id],
    );
    await client.query('COMMIT');
  } catch (error) {
    await client.query('ROLLBACK').catch(() => {});
    throw new MigrationError(
      `Migration "${migration.name}" failed and was rolled back: ${describePgError(error, migration.sql)}`,
      migration.name,
    );
  }
}

function describePgError(error: unknown, sql: string): string {
  if (!(error instanceof Error)) return String(error);
  const pgError = error as Error & { code?: string; position?: string };
  let text = pgError.message;
  if (pgError.code) text += ` (SQLSTATE ${pgError.code})`;
  const position = Number(pgError.position);
  if (Number.isFinite(position) && position > 0) {
    const before = sql.slice(0, position - 1);
    const lineNumber = before.split('\n').length;
    const line = sql.split('\n')[lineNumber - 1]?.trim() ?? '';
    text += ` at line ${lineNumber}: ${line}`;
  }
  return text;
}
