import { Inject, Injectable, type OnApplicationShutdown } from '@nestjs/common';
import type { AppConfig } from '@ausline/contracts';
import { createPrismaClient, type PrismaClient } from '@ausline/db';
import { DISCONNECT_SHARE, settledWithin } from './shutdown-budget.js';
import { WORKER_CONFIG } from './worker-config.js';

/** Injection token of the worker's PrismaClient (a proxy in Prisma 7: never use instanceof on it). */
export const PRISMA = Symbol('PRISMA');

export function prismaProvider(databaseUrl: string, maxConnections: number) {
  return { provide: PRISMA, useFactory: (): PrismaClient => createPrismaClient(databaseUrl, { maxConnections }) };
}

/**
 * Disconnects Prisma last: Nest runs every beforeApplicationShutdown hook (where the BullMQ worker
 * drains) before any onApplicationShutdown hook, so no job still needs the pool here.
 */
@Injectable()
export class PrismaCloser implements OnApplicationShutdown {
  constructor(
    @Inject(PRISMA) private readonly prisma: PrismaClient,
    @Inject(WORKER_CONFIG) private readonly config: AppConfig,
  ) {}

  async onApplicationShutdown(): Promise<void> {
    // A job cut off at shutdown may still hold a pooled connection; do not wait for it forever.
    await settledWithin(this.prisma.$disconnect(), Math.floor(this.config.SHUTDOWN_TIMEOUT_MS * DISCONNECT_SHARE));
  }
}
