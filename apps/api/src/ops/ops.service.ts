import { Injectable, type OnApplicationShutdown, type OnModuleInit } from '@nestjs/common';
import type { Redis } from 'ioredis';
import type { PrismaClient } from '@ausline/db';
import { InjectApiConfig, type ApiConfig } from '../app-config.js';
import { JsonLogger } from '../http/logger.js';
import { InjectPrisma } from '../prisma.provider.js';
import { createOpsRedis } from './ops-redis.js';

export interface DependencyCheck {
  ok: boolean;
  ms: number;
  error?: string;
}

export interface Readiness {
  status: 'ready' | 'not-ready';
  checks: { postgres: DependencyCheck; redis: DependencyCheck };
}

const CHECK_TIMEOUT_MS = 2_000;

/**
 * Readiness checks. (The recompute queue's depth for /metrics is read through the source that the
 * queue producer registers with registerQueueDepthSource.)
 */
@Injectable()
export class OpsService implements OnModuleInit, OnApplicationShutdown {
  private readonly redis: Redis;
  private lastRedisErrorLogAt = 0;

  constructor(
    @InjectPrisma() private readonly prisma: PrismaClient,
    @InjectApiConfig() config: ApiConfig,
    private readonly logger: JsonLogger,
  ) {
    this.redis = createOpsRedis(config.REDIS_URL, (error) => this.logRedisError(error));
  }

  onModuleInit(): void {
    // Connect in the background: the API starts (and reports not-ready) while Redis is down.
    this.redis.connect().catch(() => undefined);
  }

  async onApplicationShutdown(): Promise<void> {
    this.redis.disconnect();
  }

  async readiness(): Promise<Readiness> {
    const [postgres, redis] = await Promise.all([
      timed(async () => {
        await this.prisma.$queryRaw`SELECT 1`;
      }),
      timed(async () => {
        // Right after start (or during a reconnect) give the connection the check's time to come up.
        await untilReady(this.redis);
        const reply = await this.redis.ping();
        if (reply !== 'PONG') throw new Error(`unexpected PING reply ${reply}`);
      }),
    ]);
    return { status: postgres.ok && redis.ok ? 'ready' : 'not-ready', checks: { postgres, redis } };
  }

  /** Redis being away is reported by /health/ready; log it at most every 30 s, not on every retry. */
  private logRedisError(error: Error): void {
    const now = Date.now();
    if (now - this.lastRedisErrorLogAt < 30_000) return;
    this.lastRedisErrorLogAt = now;
    this.logger.event('warn', { msg: 'redis connection problem (ops)', detail: error.message });
  }
}

function untilReady(redis: Redis, timeoutMs = CHECK_TIMEOUT_MS): Promise<void> {
  if (redis.status === 'ready') return Promise.resolve();
  if (redis.status === 'end') return Promise.reject(new Error('connection closed'));
  return new Promise<void>((resolve, reject) => {
    const onReady = () => {
      clearTimeout(timer);
      resolve();
    };
    const timer = setTimeout(() => {
      redis.off('ready', onReady);
      reject(new Error(`not connected within ${timeoutMs} ms (${redis.status})`));
    }, timeoutMs);
    redis.once('ready', onReady);
  });
}

async function timed(check: () => Promise<void>): Promise<DependencyCheck> {
  const started = performance.now();
  try {
    await new Promise<void>((resolve, reject) => {
      const timer = setTimeout(() => reject(new Error(`no answer within ${CHECK_TIMEOUT_MS} ms`)), CHECK_TIMEOUT_MS);
      check().then(
        () => {
          clearTimeout(timer);
          resolve();
        },
        (error: unknown) => {
          clearTimeout(timer);
          reject(error instanceof Error ? error : new Error(String(error)));
        },
      );
    });
    return { ok: true, ms: Math.round(performance.now() - started) };
  } catch (error) {
    // The reason only: connection strings (with credentials) never go into the reply.
    const message = error instanceof Error ? error.message.replace(/\w+:\/\/\S+/g, '<url>') : 'failed';
    return { ok: false, ms: Math.round(performance.now() - started), error: message };
  }
}
