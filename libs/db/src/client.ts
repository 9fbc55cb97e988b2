import { PrismaPg } from '@prisma/adapter-pg';
import { PrismaClient } from './generated/prisma/client.js';

export interface PrismaClientOptions {
  /** Maximum connections in this client's pg pool (default 10). */
  maxConnections?: number;
  /** Fail a connection attempt after this long instead of waiting forever (default 5000 ms). */
  connectionTimeoutMs?: number;
}

/**
 * A PrismaClient talking to Postgres through the pg driver adapter (Prisma 7 requires an adapter).
 *
 * Note: Prisma 7's constructor returns a proxy, so `client instanceof PrismaClient` is false. Check
 * behaviour (`typeof client.batch.findMany === 'function'`) instead. Call `$disconnect()` when done:
 * each client owns a pool.
 */
export function createPrismaClient(databaseUrl: string, options: PrismaClientOptions = {}): PrismaClient {
  const adapter = new PrismaPg({
    connectionString: databaseUrl,
    max: options.maxConnections ?? 10,
    connectionTimeoutMillis: options.connectionTimeoutMs ?? 5_000,
  });
  return new PrismaClient({ adapter });
}
