import { Inject, type BeforeApplicationShutdown, type OnApplicationBootstrap } from '@nestjs/common';
import { OnWorkerEvent, Processor, WorkerHost } from '@nestjs/bullmq';
import { UnrecoverableError, type Job } from 'bullmq';
import { RECOMPUTE_QUEUE, RecomputeJob, type AppConfig } from '@ausline/contracts';
import { WorkerLogger, errorMessage } from '../logger.js';
import { WorkerMetrics } from '../ops/worker-metrics.js';
import { DRAIN_SHARE, settledWithin } from '../shutdown-budget.js';
import { WORKER_CONFIG } from '../worker-config.js';
import { PredictionDeferral } from './prediction-deferral.js';
import type { PredictionWrite } from './prediction-store.js';
import { BatchNotFoundError, RecomputeService } from './recompute.service.js';
import { InvalidSpecError } from './steps.js';

/**
 * BullMQ processor of the recompute queue. Payloads carry ids only; everything is reloaded from Postgres.
 * Bad payloads, unknown batches and unusable specs fail at once (UnrecoverableError: retrying cannot
 * help); anything else (database or Redis hiccup) is retried with the job's backoff.
 */
@Processor(RECOMPUTE_QUEUE, { concurrency: 1, maxStalledCount: 2 })
export class RecomputeProcessor extends WorkerHost implements OnApplicationBootstrap, BeforeApplicationShutdown {
  private readonly deferral = new PredictionDeferral();

  constructor(
    @Inject(WORKER_CONFIG) private readonly config: AppConfig,
    private readonly recompute: RecomputeService,
    private readonly metrics: WorkerMetrics,
    private readonly logger: WorkerLogger,
  ) {
    super();
  }

  onApplicationBootstrap(): void {
    // The decorator's options are fixed at class definition; the configured concurrency applies here.
    this.worker.concurrency = this.config.WORKER_CONCURRENCY;
    this.worker.on('error', (error) => this.logger.event('warn', { msg: 'recompute worker: Redis problem', error: errorMessage(error) }));
  }

  async process(
    job: Job<unknown>,
  ): Promise<{ findings: number; changes: number; staleCleared: boolean; prediction: PredictionWrite | null; predictionDeferred: boolean }> {
    const endTimer = this.metrics.jobDurationSeconds.startTimer({ queue: RECOMPUTE_QUEUE });
    const parsed = RecomputeJob.safeParse(job.data);
    if (!parsed.success) {
      endTimer({ outcome: 'invalid' });
      throw new UnrecoverableError(`invalid recompute payload: ${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`);
    }
    const { batchId, reason } = parsed.data;
    try {
      const out = await this.recompute.recompute(batchId, {
        deferPrediction: async () => this.deferral.shouldDefer(batchId, await this.successorQueued(job)),
      });
      endTimer({ outcome: 'ok' });
      this.logger.event('debug', {
        msg: 'batch recomputed',
        batchId,
        reason,
        findings: out.findings,
        changes: out.changes.length,
        staleCleared: out.staleCleared,
        predictionDeferred: out.predictionDeferred,
      });
      return { findings: out.findings, changes: out.changes.length, staleCleared: out.staleCleared, prediction: out.prediction, predictionDeferred: out.predictionDeferred };
    } catch (error) {
      if (error instanceof BatchNotFoundError || error instanceof InvalidSpecError) {
        endTimer({ outcome: 'invalid' });
        throw new UnrecoverableError(error.message);
      }
      endTimer({ outcome: 'failed' });
      throw error instanceof Error ? error : new Error(String(error));
    }
  }

  /**
   * Whether a newer recompute of this job's batch was added while it ran. With `keepLastIfActive` BullMQ keeps such
   * an add aside in the hash `<queue>:dn:<deduplication id>` (its Lua scripts, 6.7: storeDeduplicatedNextJob) and
   * turns it into a job when this one finishes. Any doubt (no deduplication id, Redis trouble) answers false: predict.
   */
  private async successorQueued(job: Job<unknown>): Promise<boolean> {
    if (!job.deduplicationId) return false;
    try {
      const client = await this.worker.getBackend().client;
      return (await client.hexists(this.worker.toKey(`dn:${job.deduplicationId}`), 'data')) === 1;
    } catch {
      return false;
    }
  }

  @OnWorkerEvent('failed')
  onFailed(job: Job<unknown> | undefined, error: Error): void {
    this.logger.event('error', {
      msg: 'recompute failed',
      jobId: job?.id,
      data: job?.data,
      attemptsMade: job?.attemptsMade,
      error: error.message,
    });
  }

  /**
   * Drains before anything closes: stop taking jobs and let running ones finish, but no longer than
   * most of the shutdown budget; then close hard (a job cut off stalls and another worker retries it).
   * BullMQ's close() waits for running jobs without a limit and a later close(true) would only join it,
   * so the wait is done with pause() and the close itself is forced.
   */
  async beforeApplicationShutdown(): Promise<void> {
    const budgetMs = Math.max(100, Math.floor(this.config.SHUTDOWN_TIMEOUT_MS * DRAIN_SHARE));
    const drained = await settledWithin(this.worker.pause(), budgetMs);
    if (!drained) this.logger.event('warn', { msg: 'recompute jobs still running at shutdown; closing hard', budgetMs });
    await this.worker.close(true);
  }
}
