import { InjectQueue, OnWorkerEvent, Processor, WorkerHost } from '@nestjs/bullmq';
import { Inject, type BeforeApplicationShutdown, type OnApplicationBootstrap } from '@nestjs/common';
import { UnrecoverableError, type Job, type Queue } from 'bullmq';
import { DRIFT_QUEUE, OUTCOME_QUEUE, OutcomeJob, RECOMPUTE_QUEUE, type AppConfig, type DriftJob, type RecomputeJob } from '@ausline/contracts';
import { enqueueDrift } from '../drift/enqueue.js';
import { enqueueRecompute } from '../recompute/enqueue.js';
import { WorkerLogger, errorMessage } from '../logger.js';
import { WorkerMetrics } from '../ops/worker-metrics.js';
import { BatchNotFoundError } from '../recompute/recompute.service.js';
import { DRAIN_SHARE, settledWithin } from '../shutdown-budget.js';
import { WORKER_CONFIG } from '../worker-config.js';
import { OutcomeService } from './outcome.service.js';

/**
 * BullMQ processor of the outcome queue (one batch per job): charted values and lab comparisons, then the
 * drift job of the batch's product spec and line when its charted values changed. If that enqueue fails the
 * drift sweep finds the chart behind its values and enqueues it later.
 *
 * When a lab result changes the product's calibration in force, the product's loads still in the bath are
 * recomputed with it at once: their verdicts and hold advice decide when they leave the bath, so they must not wait
 * for their next bath reading. Finished loads are not: their stored prediction is the record the load was judged
 * and released on; they take the calibration at their next recompute (a lab result of their own, corrected
 * records, the reconciler). A failed enqueue is logged; the load's next bath reading recomputes it anyway.
 */
@Processor(OUTCOME_QUEUE, { concurrency: 1, maxStalledCount: 2 })
export class OutcomeProcessor extends WorkerHost implements OnApplicationBootstrap, BeforeApplicationShutdown {
  constructor(
    @Inject(WORKER_CONFIG) private readonly config: AppConfig,
    private readonly outcome: OutcomeService,
    @InjectQueue(DRIFT_QUEUE) private readonly driftQueue: Queue<DriftJob>,
    @InjectQueue(RECOMPUTE_QUEUE) private readonly recomputeQueue: Queue<RecomputeJob>,
    private readonly metrics: WorkerMetrics,
    private readonly logger: WorkerLogger,
  ) {
    super();
  }

  onApplicationBootstrap(): void {
    this.worker.on('error', (error) => this.logger.event('warn', { msg: 'outcome worker: Redis problem', error: errorMessage(error) }));
  }

  async process(job: Job<unknown>): Promise<{ driftValuesChanged: boolean; comparisons: number; changes: number; recalibrated: number }> {
    const endTimer = this.metrics.jobDurationSeconds.startTimer({ queue: OUTCOME_QUEUE });
    const parsed = OutcomeJob.safeParse(job.data);
    if (!parsed.success) {
      endTimer({ outcome: 'invalid' });
      throw new UnrecoverableError(`invalid outcome payload: ${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`);
    }
    try {
      const out = await this.outcome.review(parsed.data.batchId);
      if (out.driftValuesChanged) {
        await enqueueDrift(this.driftQueue, out.productSpecId, out.lineId, 'outcome').catch((error: unknown) =>
          this.logger.event('warn', { msg: 'drift job not enqueued; the sweep will catch up', productSpecId: out.productSpecId, lineId: out.lineId, error: errorMessage(error) }),
        );
      }
      for (const batchId of out.recalibratedOpenBatchIds) {
        await enqueueRecompute(this.recomputeQueue, batchId, 'calibration').catch((error: unknown) =>
          this.logger.event('warn', { msg: 'recompute after a calibration change not enqueued; the next reading will', batchId, error: errorMessage(error) }),
        );
      }
      endTimer({ outcome: 'ok' });
      return { driftValuesChanged: out.driftValuesChanged, comparisons: out.comparisons, changes: out.changes.length, recalibrated: out.recalibratedOpenBatchIds.length };
    } catch (error) {
      if (error instanceof BatchNotFoundError) {
        endTimer({ outcome: 'invalid' });
        throw new UnrecoverableError(error.message);
      }
      endTimer({ outcome: 'failed' });
      throw error instanceof Error ? error : new Error(String(error));
    }
  }

  @OnWorkerEvent('failed')
  onFailed(job: Job<unknown> | undefined, error: Error): void {
    this.logger.event('error', { msg: 'outcome job failed', jobId: job?.id, data: job?.data, attemptsMade: job?.attemptsMade, error: error.message });
  }

  async beforeApplicationShutdown(): Promise<void> {
    const budgetMs = Math.max(100, Math.floor(this.config.SHUTDOWN_TIMEOUT_MS * DRAIN_SHARE));
    await settledWithin(this.worker.pause(), budgetMs);
    await this.worker.close(true);
  }
}
