#!/usr/bin/env node
/**
 * `npm run db:migrate`: applies prisma/migrations to DATABASE_URL (see runMigrations).
 * Also the first step of the Docker image's start command (compiled to libs/db/dist/bin/migrate.js).
 * MIGRATIONS_DIR overrides the folder; the default is the repository's prisma/migrations.
 */
import { fileURLToPath } from 'node:url';
import { MigrationError, runMigrations } from '../migrate/run-migrations.js';

const databaseUrl = process.env.DATABASE_URL;
if (!databaseUrl) {
  console.error('db:migrate: DATABASE_URL is not set (e.g. postgresql://postgres@127.0.0.1:5432/ausline)');
  process.exit(2);
}
// src/bin and dist/bin sit at the same depth, so this holds for the TypeScript source and the build.
const migrationsDir = process.env.MIGRATIONS_DIR ?? fileURLToPath(new URL('../../../../prisma/migrations', import.meta.url));

try {
  await runMigrations(databaseUrl, migrationsDir, { log: (line) => console.log(`db:migrate: ${line}`) });
} catch (error) {
  if (error instanceof MigrationError) {
    console.error(`db:migrate: ${error.message}`);
  } else {
    console.error('db:migrate: could not apply migrations:', error instanceof Error ? error.message : error);
  }
  process.exit(1);
}
