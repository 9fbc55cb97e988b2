import { Global, Inject, Injectable, Module, type OnApplicationShutdown, type Provider } from '@nestjs/common';
import { createPrismaClient, type PrismaClient } from '@ausline/db';
import { API_CONFIG, type ApiConfig } from './app-config.js';

/**
 * One PrismaClient per API process (it owns a pg pool), made by libs/db createPrismaClient.
 *
 *   constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}
 *
 * Prisma 7's client is a proxy: never test it with instanceof.
 */
export const PRISMA = Symbol.for('ausline.PrismaClient');

export const InjectPrisma = (): ParameterDecorator => Inject(PRISMA);

const prismaProvider: Provider = {
  provide: PRISMA,
  inject: [API_CONFIG],
  useFactory: (config: ApiConfig): PrismaClient => createPrismaClient(config.DATABASE_URL),
};

@Injectable()
class PrismaLifecycle implements OnApplicationShutdown {
  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}

  async onApplicationShutdown(): Promise<void> {
    await this.prisma.$disconnect();
  }
}

@Global()
@Module({ providers: [prismaProvider, PrismaLifecycle], exports: [PRISMA] })
export class PrismaModule {}

/** True for Prisma's unique-constraint violation (P2002): a create raced or repeated an existing key. */
export function isUniqueViolation(error: unknown): boolean {
  return error instanceof Error && error.name === 'PrismaClientKnownRequestError' && (error as { code?: unknown }).code === 'P2002';
}
