import { OnWorkerEvent, Processor, WorkerHost } from '@nestjs/bullmq';
import { Inject, type BeforeApplicationShutdown, type OnApplicationBootstrap } from '@nestjs/common';
import { UnrecoverableError, type Job } from 'bullmq';
import { DRIFT_QUEUE, DriftJob, type AppConfig } from '@ausline/contracts';
import { WorkerLogger, errorMessage } from '../logger.js';
import { WorkerMetrics } from '../ops/worker-metrics.js';
import { DRAIN_SHARE, settledWithin } from '../shutdown-budget.js';
import { WORKER_CONFIG } from '../worker-config.js';
import { DriftService, DriftTargetNotFoundError, type DriftChartOutcome } from './drift.service.js';

/** BullMQ processor of the drift queue: one product spec and line per job (ids only; everything reloaded). */
@Processor(DRIFT_QUEUE, { concurrency: 1, maxStalledCount: 2 })
export class DriftProcessor extends WorkerHost implements OnApplicationBootstrap, BeforeApplicationShutdown {
  constructor(
    @Inject(WORKER_CONFIG) private readonly config: AppConfig,
    private readonly drift: DriftService,
    private readonly metrics: WorkerMetrics,
    private readonly logger: WorkerLogger,
  ) {
    super();
  }

  onApplicationBootstrap(): void {
    this.worker.on('error', (error) => this.logger.event('warn', { msg: 'drift worker: Redis problem', error: errorMessage(error) }));
  }

  async process(job: Job<unknown>): Promise<{ charts: DriftChartOutcome[]; changes: number }> {
    const endTimer = this.metrics.jobDurationSeconds.startTimer({ queue: DRIFT_QUEUE });
    const parsed = DriftJob.safeParse(job.data);
    if (!parsed.success) {
      endTimer({ outcome: 'invalid' });
      throw new UnrecoverableError(`invalid drift payload: ${parsed.error.issues.map((i) => `${i.path.join('.')}: ${i.message}`).join('; ')}`);
    }
    try {
      const out = await this.drift.evaluate(parsed.data.productSpecId, parsed.data.lineId);
      endTimer({ outcome: 'ok' });
      this.logger.event('debug', { msg: 'drift charts evaluated', ...parsed.data, charts: out.charts.map((c) => `${c.metric}:${c.status}`), changes: out.changes.length });
      return { charts: out.charts, changes: out.changes.length };
    } catch (error) {
      if (error instanceof DriftTargetNotFoundError) {
        endTimer({ outcome: 'invalid' });
        throw new UnrecoverableError(error.message);
      }
      endTimer({ outcome: 'failed' });
      throw error instanceof Error ? error : new Error(String(error));
    }
  }

  @OnWorkerEvent('failed')
  onFailed(job: Job<unknown> | undefined, error: Error): void {
    this.logger.event('error', { msg: 'drift job failed', jobId: job?.id, data: job?.data, attemptsMade: job?.attemptsMade, error: error.message });
  }

  async beforeApplicationShutdown(): Promise<void> {
    const budgetMs = Math.max(100, Math.floor(this.config.SHUTDOWN_TIMEOUT_MS * DRAIN_SHARE));
    await settledWithin(this.worker.pause(), budgetMs);
    await this.worker.close(true);
  }
}
