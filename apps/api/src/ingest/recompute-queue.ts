import { Inject, Injectable, Optional, type OnApplicationShutdown } from '@nestjs/common';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { RECOMPUTE_QUEUE, recomputeJobOptions, type RecomputeJob } from '@ausline/contracts';
import type { PrismaClient } from '@ausline/db';
import { API_CONFIG, type ApiConfig } from '../app-config.js';
import { InjectPrisma } from '../prisma.provider.js';
import { recomputeEnqueueFailuresTotal, registerQueueDepthSource } from '../ops/metrics.js';
import { JsonLogger } from '../http/logger.js';

export type RecomputeReason = RecomputeJob['reason'];

export interface EnqueueOutcome {
  /** Batches whose recompute is now waiting in the queue. */
  enqueued: number;
  /** Batches that could not be enqueued and were marked stale for the worker's reconciler. */
  markedStale: number;
}

/** How long one enqueue may take before we give up on Redis and mark the batch stale instead. */
const ENQUEUE_TIMEOUT_MS = 2_000;
/** Right after start the Redis connection may still be opening; wait this long for it at most. */
const CONNECT_GRACE_MS = 1_000;
/** How long after start the connection counts as "still opening" rather than "down". */
const STARTUP_WINDOW_MS = 10_000;
/** Log a Redis connection error at most this often (a down Redis otherwise floods the log). */
const ERROR_LOG_INTERVAL_MS = 30_000;

/**
 * Producer side of the recompute pipeline (API-CONTRACTS.md "Queue"). Called after the data is
 * committed: Postgres is the source of truth, Redis only carries work. When Redis does not take the
 * job (down, unreachable, too slow) the HTTP call still succeeds and the batch is flagged
 * stale=true, staleSince=now() (the database clock, which the worker's guard compares against); the
 * worker's reconciler enqueues it later.
 *
 * The ioredis connection fails fast (no offline queue), so a dead Redis costs a request
 * milliseconds, not a hang.
 */
@Injectable()
export class RecomputeQueue implements OnApplicationShutdown {
  private readonly connection: Redis;
  private readonly queue: Queue<RecomputeJob>;
  private readonly unregisterDepth: () => void;
  private readonly logger: JsonLogger;
  private lastErrorLogAt = 0;
  private readonly startedAt = Date.now();
  private everReady = false;
  private connectFailed = false;

  constructor(
    @Inject(API_CONFIG) config: ApiConfig,
    @InjectPrisma() private readonly prisma: PrismaClient,
    @Optional() logger?: JsonLogger,
  ) {
    this.logger = logger ?? new JsonLogger(config.LOG_LEVEL);
    this.connection = new Redis(config.REDIS_URL, {
      enableOfflineQueue: false,
      maxRetriesPerRequest: 1,
      connectTimeout: 2_000,
      retryStrategy: (attempt) => Math.min(attempt * 250, 5_000),
    });
    this.connection.on('error', (error) => {
      this.connectFailed = true;
      this.logRedisError(error);
    });
    this.connection.on('ready', () => {
      this.everReady = true;
    });
    this.queue = new Queue<RecomputeJob>(RECOMPUTE_QUEUE, { connection: this.connection, prefix: config.QUEUE_PREFIX });
    this.queue.on('error', (error) => this.logRedisError(error));
    this.unregisterDepth = registerQueueDepthSource(RECOMPUTE_QUEUE, () => this.queue.getJobCounts());
  }

  /**
   * Enqueues a recompute per batch, coalesced (recomputeJobOptions: at most one active and one waiting per
   * batch). Never throws: whatever Redis does, the caller's data is already committed and each batch ends up
   * either queued or marked stale.
   */
  async enqueue(batchIds: Iterable<string>, reason: RecomputeReason): Promise<EnqueueOutcome> {
    const ids = [...new Set(batchIds)];
    if (ids.length === 0) return { enqueued: 0, markedStale: 0 };
    const stillOpening = !this.everReady && !this.connectFailed && Date.now() - this.startedAt < STARTUP_WINDOW_MS;
    if (this.connection.status !== 'ready' && stillOpening) {
      await this.waitForConnection(CONNECT_GRACE_MS);
    }
    // Known to be down: do not wait for BullMQ to give up, go straight to the stale flag.
    const results: Array<PromiseSettledResult<unknown>> =
      this.connection.status === 'ready'
        ? await Promise.allSettled(ids.map((batchId) => withTimeout(this.add(batchId, reason), ENQUEUE_TIMEOUT_MS)))
        : ids.map(() => ({ status: 'rejected', reason: new Error(`Redis connection is ${this.connection.status}`) }));
    const failed = ids.filter((_, i) => results[i]!.status === 'rejected');
    if (failed.length > 0) {
      const firstError = (results.find((r) => r.status === 'rejected') as PromiseRejectedResult).reason;
      this.logger.event('warn', {
        msg: 'recompute not enqueued; batches marked stale for the reconciler',
        batches: failed.length,
        reason,
        error: firstError instanceof Error ? firstError.message : String(firstError),
      });
      recomputeEnqueueFailuresTotal.inc(failed.length);
      const marked = await this.markStaleOrLog(failed, reason);
      return { enqueued: ids.length - failed.length, markedStale: marked ? failed.length : 0 };
    }
    return { enqueued: ids.length, markedStale: 0 };
  }

  /**
   * The caller's data is committed, so a failure here must not turn its reply into a 500 (the controller
   * would retry a write that is already stored). Postgres gone between the commit and this update leaves
   * the batch neither queued nor flagged; the worker's reconciler re-evaluates loads in progress, and a
   * retry of the post queues the batch again (unchanged writes enqueue too).
   */
  private async markStaleOrLog(batchIds: string[], reason: RecomputeReason): Promise<boolean> {
    try {
      await this.markStale(batchIds);
      return true;
    } catch (error) {
      this.logger.event('error', {
        msg: 'recompute not enqueued and batches not marked stale; left to the reconciler and retries',
        batches: batchIds.length,
        batchIds,
        reason,
        error: error instanceof Error ? error.message : String(error),
      });
      return false;
    }
  }

  private add(batchId: string, reason: RecomputeReason): Promise<unknown> {
    return this.queue.add('recompute', { batchId, reason }, recomputeJobOptions(batchId));
  }

  /** Flags batches for the reconciler; staleSince from the database clock (the worker's guard reads it). */
  async markStale(batchIds: string[]): Promise<void> {
    if (batchIds.length === 0) return;
    await this.prisma.$executeRaw`
      UPDATE "Batch" SET "stale" = true, "staleSince" = now(), "updatedAt" = now()
      WHERE "id" = ANY(${batchIds}::uuid[])`;
  }

  private waitForConnection(ms: number): Promise<void> {
    return new Promise((resolve) => {
      const done = (): void => {
        clearTimeout(timer);
        this.connection.off('ready', done);
        resolve();
      };
      const timer = setTimeout(done, ms);
      this.connection.once('ready', done);
    });
  }

  private logRedisError(error: Error): void {
    const now = Date.now();
    if (now - this.lastErrorLogAt < ERROR_LOG_INTERVAL_MS) return;
    this.lastErrorLogAt = now;
    this.logger.event('warn', { msg: 'recompute queue: Redis connection problem', error: error.message });
  }

  async onApplicationShutdown(): Promise<void> {
    this.unregisterDepth();
    await this.queue.close().catch(() => undefined);
    this.connection.disconnect();
  }
}

function withTimeout<T>(promise: Promise<T>, ms: number): Promise<T> {
  return new Promise<T>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`Redis did not answer within ${ms} ms`)), ms);
    promise.then(
      (value) => {
        clearTimeout(timer);
        resolve(value);
      },
      (error: unknown) => {
        clearTimeout(timer);
        reject(error instanceof Error ? error : new Error(String(error)));
      },
    );
  });
}
