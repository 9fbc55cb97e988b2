import { InjectQueue } from '@nestjs/bullmq';
import { Inject, Injectable, type BeforeApplicationShutdown, type OnApplicationBootstrap } from '@nestjs/common';
import type { Job, Queue } from 'bullmq';
import { DRIFT_QUEUE, OUTCOME_QUEUE, RecomputeJob, type AppConfig, type DriftJob, type OutcomeJob } from '@ausline/contracts';
import type { PrismaClient } from '@ausline/db';
import { WorkerLogger, errorMessage } from '../logger.js';
import { PRISMA } from '../prisma.js';
import { RecomputeProcessor } from '../recompute/recompute.processor.js';
import { WORKER_CONFIG, WORKER_OPTIONS, type WorkerRuntimeOptions } from '../worker-config.js';
import { enqueueDrift, enqueueOutcome } from './enqueue.js';

/** Rows handled per sweep and source; the rest wait for the next sweep. */
const SWEEP_LIMIT = 500;
/** Batches older than this are left alone by the sweep (their outcome changes only through a recompute). */
const SWEEP_BATCH_AGE_DAYS = 120;

/**
 * Starts the follow-up work of a batch:
 *  - after every completed recompute (the batch's prediction, its lab results or its logs changed: the api
 *    enqueues a recompute for each of those) an outcome job for that batch; the recompute code itself does not
 *    need to know (a listener on the recompute Worker of this process);
 *  - a sweep on the reconciler's interval, the safety net for a crash between a recompute and that enqueue,
 *    or Redis refusing it: batches whose latest prediction, lab results or end of hold differ from what their
 *    outcome saw get an outcome job; charts with values newer than their last evaluation (or a spec version
 *    newer than it) get a drift job.
 * Every worker process runs both; the queues' deduplication folds the duplicates.
 */
@Injectable()
export class DriftTrigger implements OnApplicationBootstrap, BeforeApplicationShutdown {
  private timer: NodeJS.Timeout | null = null;
  private running: Promise<unknown> | null = null;

  constructor(
    @Inject(WORKER_CONFIG) private readonly config: AppConfig,
    @Inject(WORKER_OPTIONS) private readonly options: WorkerRuntimeOptions,
    @Inject(PRISMA) private readonly prisma: PrismaClient,
    @InjectQueue(OUTCOME_QUEUE) private readonly outcomeQueue: Queue<OutcomeJob>,
    @InjectQueue(DRIFT_QUEUE) private readonly driftQueue: Queue<DriftJob>,
    private readonly recompute: RecomputeProcessor,
    private readonly logger: WorkerLogger,
  ) {}

  onApplicationBootstrap(): void {
    for (const q of [this.outcomeQueue, this.driftQueue]) q.on('error', (error) => this.logger.event('warn', { msg: `${q.name} queue: Redis problem`, error: errorMessage(error) }));
    this.recompute.worker.on('completed', (job: Job<unknown>) => void this.afterRecompute(job));
    if (!this.options.reconcile) return;
    const every = this.config.RECONCILE_INTERVAL_S * 1000;
    const loop = () => {
      this.running = this.sweep()
        .catch((error: unknown) => this.logger.event('warn', { msg: 'drift sweep failed; retrying next tick', error: errorMessage(error) }))
        .finally(() => {
          this.running = null;
          if (this.timer) this.timer = setTimeout(loop, every);
        });
    };
    this.timer = setTimeout(loop, every);
  }

  private async afterRecompute(job: Job<unknown>): Promise<void> {
    const parsed = RecomputeJob.safeParse(job?.data);
    if (!parsed.success) return;
    await enqueueOutcome(this.outcomeQueue, parsed.data.batchId, 'recompute').catch((error: unknown) =>
      this.logger.event('warn', { msg: 'outcome job not enqueued; the sweep will catch up', batchId: parsed.data.batchId, error: errorMessage(error) }),
    );
  }

  /** One sweep now; returns how many jobs it enqueued (tests and tooling call it directly). */
  async sweep(): Promise<{ outcomes: number; charts: number }> {
    const batches = await this.prisma.$queryRaw<{ id: string }[]>`
      SELECT b."id"
      FROM "Batch" b
      LEFT JOIN "BatchOutcome" o ON o."batchId" = b."id"
      LEFT JOIN LATERAL (SELECT p."id", p."inputDigest" FROM "Prediction" p WHERE p."batchId" = b."id" ORDER BY p."version" DESC LIMIT 1) lp ON true
      LEFT JOIN LATERAL (SELECT array_agg(l."id"::text ORDER BY l."id"::text) AS ids FROM "LabResult" l WHERE l."batchId" = b."id") lr ON true
      LEFT JOIN "LoadEvent" ob ON ob."batchId" = b."id" AND ob."kind" = 'OUT_OF_BATH'
      WHERE b."createdAt" >= now() - make_interval(days => ${SWEEP_BATCH_AGE_DAYS})
        AND (
          (o."batchId" IS NULL AND (lp."id" IS NOT NULL OR lr.ids IS NOT NULL OR ob."id" IS NOT NULL))
          OR (o."batchId" IS NOT NULL AND (
                (o."inputs"->>'predictionId') IS DISTINCT FROM lp."id"::text
             OR (o."inputs"->>'predictionDigest') IS DISTINCT FROM lp."inputDigest"
             OR (o."inputs"->'labResultIds') IS DISTINCT FROM to_jsonb(coalesce(lr.ids, ARRAY[]::text[]))
             OR ((o."inputs"->>'outOfBathAt') IS NULL) <> (ob."id" IS NULL)))
        )
      ORDER BY b."createdAt" ASC
      LIMIT ${SWEEP_LIMIT}`;
    for (const b of batches) await enqueueOutcome(this.outcomeQueue, b.id, 'sweep');
    const charts = await this.prisma.$queryRaw<{ productSpecId: string; lineId: string }[]>`
      SELECT v."productSpecId", v."lineId"
      FROM "DriftValue" v
      LEFT JOIN "DriftChart" c ON c."productSpecId" = v."productSpecId" AND c."lineId" = v."lineId" AND c."metric" = v."metric"
      GROUP BY v."productSpecId", v."lineId"
      HAVING bool_or(c."id" IS NULL OR v."updatedAt" > c."evaluatedAt")
      UNION
      SELECT c."productSpecId", c."lineId"
      FROM "DriftChart" c
      JOIN "ProductSpecVersion" sv ON sv."specId" = c."productSpecId"
      GROUP BY c."productSpecId", c."lineId"
      HAVING max(coalesce(sv."approvedAt", sv."createdAt")) > min(c."evaluatedAt")
      LIMIT ${SWEEP_LIMIT}`;
    for (const c of charts) await enqueueDrift(this.driftQueue, c.productSpecId, c.lineId, 'sweep');
    if (batches.length || charts.length) this.logger.event('debug', { msg: 'drift sweep enqueued', outcomes: batches.length, charts: charts.length });
    return { outcomes: batches.length, charts: charts.length };
  }

  async beforeApplicationShutdown(): Promise<void> {
    if (this.timer) clearTimeout(this.timer);
    this.timer = null;
    await this.running;
  }
}
