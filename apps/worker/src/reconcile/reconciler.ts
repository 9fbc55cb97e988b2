import { utimes, writeFile } from 'node:fs/promises';
import { Inject, Injectable, type BeforeApplicationShutdown, type OnApplicationBootstrap } from '@nestjs/common';
import { InjectQueue } from '@nestjs/bullmq';
import type { Queue } from 'bullmq';
import { RECOMPUTE_QUEUE, type AppConfig, type RecomputeJob } from '@ausline/contracts';
import { RecomputeInputsRepository, type PrismaClient } from '@ausline/db';
import { WorkerLogger, errorMessage } from '../logger.js';
import { WorkerMetrics } from '../ops/worker-metrics.js';
import { PRISMA } from '../prisma.js';
import { enqueueRecompute } from '../recompute/enqueue.js';
import { WORKER_CONFIG, WORKER_OPTIONS, type WorkerRuntimeOptions } from '../worker-config.js';

/** Batches handled per tick and source; the rest wait for the next tick. */
const BATCH_LIMIT = 500;

/**
 * Keeps Postgres and the queue in step:
 *  - batches flagged stale (the api committed their data but could not enqueue, Redis being down) are
 *    enqueued again; the recompute itself clears the flag, and only if the flag is older than the
 *    recompute's start, so data that lands meanwhile is never forgotten;
 *  - batches still being treated are re-evaluated every few ticks even when no data arrives, because
 *    time alone breaks rules (a hold running past its maximum, a controller gone silent).
 * Every worker process runs it; the queue's per-batch deduplication folds the duplicates.
 */
@Injectable()
export class Reconciler implements OnApplicationBootstrap, BeforeApplicationShutdown {
  private readonly inputs: RecomputeInputsRepository;
  private timer: NodeJS.Timeout | null = null;
  private running: Promise<unknown> | null = null;
  private ticks = 0;

  constructor(
    @Inject(WORKER_CONFIG) private readonly config: AppConfig,
    @Inject(WORKER_OPTIONS) private readonly options: WorkerRuntimeOptions,
    @Inject(PRISMA) prisma: PrismaClient,
    @InjectQueue(RECOMPUTE_QUEUE) private readonly queue: Queue<RecomputeJob>,
    private readonly metrics: WorkerMetrics,
    private readonly logger: WorkerLogger,
  ) {
    this.inputs = new RecomputeInputsRepository(prisma);
  }

  onApplicationBootstrap(): void {
    this.queue.on('error', (error) => this.logger.event('warn', { msg: 'reconciler queue: Redis problem', error: errorMessage(error) }));
    if (!this.options.reconcile) return;
    const every = this.config.RECONCILE_INTERVAL_S * 1000;
    const loop = () => {
      this.running = this.tick().finally(() => {
        this.running = null;
        if (this.timer) this.timer = setTimeout(loop, every);
      });
    };
    this.timer = setTimeout(loop, 0);
  }

  /**
   * One pass; returns how many recomputes it enqueued per source. `everything` also sweeps in-progress
   * batches regardless of the tick count (tests, tooling).
   */
  async tick(everything = false): Promise<{ stale: number; inProgress: number }> {
    const counts = { stale: 0, inProgress: 0 };
    try {
      await this.touchAliveFile();
      for (const id of await this.inputs.staleBatchIds(BATCH_LIMIT)) {
        await enqueueRecompute(this.queue, id, 'reconcile');
        counts.stale++;
      }
      if (everything || this.ticks % this.options.inProgressEveryTicks === 0) {
        for (const id of await this.inputs.inProgressBatchIds(this.options.inProgressWithinMs, BATCH_LIMIT)) {
          await enqueueRecompute(this.queue, id, 'reconcile');
          counts.inProgress++;
        }
      }
    } catch (error) {
      this.metrics.reconcileErrorsTotal.inc();
      this.logger.event('warn', { msg: 'reconcile pass failed; retrying next tick', error: errorMessage(error) });
    } finally {
      this.ticks++;
    }
    if (counts.stale) this.metrics.reconcileEnqueuedTotal.inc({ source: 'stale' }, counts.stale);
    if (counts.inProgress) this.metrics.reconcileEnqueuedTotal.inc({ source: 'in-progress' }, counts.inProgress);
    if (counts.stale) this.logger.event('info', { msg: 'stale batches enqueued', count: counts.stale });
    return counts;
  }

  private async touchAliveFile(): Promise<void> {
    const file = this.options.aliveFile;
    if (!file) return;
    const now = new Date();
    // Liveness for a container healthcheck; never let a read-only /tmp stop the reconciling itself.
    await utimes(file, now, now)
      .catch(() => writeFile(file, `${now.toISOString()}\n`))
      .catch((error: unknown) => this.logger.event('debug', { msg: 'alive file not written', file, error: errorMessage(error) }));
  }

  async beforeApplicationShutdown(): Promise<void> {
    if (this.timer) clearTimeout(this.timer);
    this.timer = null;
    await this.running;
  }
}
