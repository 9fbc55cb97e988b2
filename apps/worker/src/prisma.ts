import { Inject, Injectable, type OnApplicationShutdown } from '@nestjs/common';
import { createPrismaClient, type PrismaClient } from '@ausline/db';

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
  constructor(@Inject(PRISMA) private readonly prisma: PrismaClient) {}
  async onApplicationShutdown(): Promise<void> {
    await this.prisma.$disconnect();
  }
}
