import pg from 'pg';
import { PrismaPg } from '@prisma/adapter-pg';
import { PrismaClient } from './generated/prisma/client.js';

export interface PrismaClientOptions {
  /** Maximum connections in this client's pg pool (default 10). */
  maxConnections?: number;
  /** Fail a connection attempt after this long instead of waiting forever (default 5000 ms). */
  connectionTimeoutMs?: number;
}

/**
 * A pg connection that runs the promise-style queries given to it one after another.
 *
 * Why: inside an interactive transaction ($transaction(async (tx) => …)) Prisma 7's query interpreter loads the
 * relations of one read (a `select`/`include` of two or more relations) with Promise.all on the transaction's single
 * connection (@prisma/adapter-pg 7.10; prisma/orm pull requests #29468 and #29979 propose the same serialisation in
 * the adapter). pg still queues them internally but warns "Calling client.query() when the client is already
 * executing a query is deprecated" and pg 9 will refuse. Queuing here, before pg sees them, keeps the order and the
 * results identical. Callback and submittable calls (pg-pool's own, one at a time per checked-out connection) pass
 * straight through.
 */
export class SerialPgClient extends pg.Client {
  private tail: Promise<unknown> = Promise.resolve();

  // pg's query() has many overloads; this keeps its signature and only changes when a promise-style call starts.
  override query(...args: unknown[]): never {
    const [config, values, callback] = args as [unknown, unknown, unknown];
    const passThrough = typeof values === 'function' || typeof callback === 'function' || typeof (config as { submit?: unknown } | null)?.submit === 'function';
    const superQuery = (): unknown => (super.query as (...a: unknown[]) => unknown).apply(this, args);
    if (passThrough) return superQuery() as never;
    const result = this.tail.then(superQuery, superQuery);
    this.tail = result.then(
      () => undefined,
      () => undefined,
    );
    return result as never;
  }
}

/**
 * A PrismaClient talking to Postgres through the pg driver adapter (Prisma 7 requires an adapter), on connections
 * that serialise their queries (SerialPgClient).
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
    Client: SerialPgClient as unknown as new () => pg.ClientBase,
  });
  return new PrismaClient({ adapter });
}
