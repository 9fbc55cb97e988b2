export { createPrismaClient, type PrismaClientOptions } from './client.js';
// Generated client, model types, enums and the Prisma namespace (Prisma.JsonValue, Prisma.BatchWhereInput ...).
export * from './generated/prisma/client.js';
export {
  runMigrations,
  listMigrations,
  migrationChecksum,
  MigrationError,
  PRISMA_MIGRATION_LOCK_KEY,
  type MigrationFile,
  type RunMigrationsOptions,
  type RunMigrationsResult,
} from './migrate/run-migrations.js';
export * from './repositories/deviations.js';
export * from './repositories/recompute-inputs.js';
export * from './repositories/pyrometry.js';
export * from './repositories/drift-lots.js';
export * from './repositories/product-calibrations.js';
