import { Module, type DynamicModule } from '@nestjs/common';
import { BullModule } from '@nestjs/bullmq';
import { DRIFT_QUEUE, OUTCOME_QUEUE, RECOMPUTE_QUEUE, type AppConfig } from '@ausline/contracts';
import { DriftProcessor } from './drift/drift.processor.js';
import { DriftService } from './drift/drift.service.js';
import { DriftTrigger } from './drift/drift-trigger.js';
import { LiveEventsPublisher } from './events/live-events.js';
import { OutcomeProcessor } from './lab/outcome.processor.js';
import { OutcomeService } from './lab/outcome.service.js';
import { WorkerLogger } from './logger.js';
import { MetricsServer } from './ops/metrics-server.js';
import { WorkerMetrics } from './ops/worker-metrics.js';
import { PrismaCloser, prismaProvider } from './prisma.js';
import { RecomputeProcessor } from './recompute/recompute.processor.js';
import { RecomputeService } from './recompute/recompute.service.js';
import { Reconciler } from './reconcile/reconciler.js';
import { WORKER_CONFIG, WORKER_OPTIONS, type WorkerRuntimeOptions } from './worker-config.js';

/**
 * The worker's module graph: BullMQ (connection and prefix from the configuration), the recompute
 * processor, the reconciler, live events and metrics. No HTTP besides the metrics endpoint.
 */
@Module({})
export class WorkerModule {
  static forRoot(config: AppConfig, options: WorkerRuntimeOptions, logger: WorkerLogger): DynamicModule {
    return {
      module: WorkerModule,
      imports: [
        BullModule.forRoot({ connection: { url: config.REDIS_URL }, prefix: config.QUEUE_PREFIX }),
        BullModule.registerQueue({ name: RECOMPUTE_QUEUE }),
        // Drift across lots and lab calibration (issue 4 items 4, 5): per-batch outcome, per spec and line drift.
        BullModule.registerQueue({ name: OUTCOME_QUEUE }),
        BullModule.registerQueue({ name: DRIFT_QUEUE }),
      ],
      providers: [
        { provide: WORKER_CONFIG, useValue: config },
        { provide: WORKER_OPTIONS, useValue: options },
        { provide: WorkerLogger, useValue: logger },
        // Jobs in flight plus the reconciler, with room to spare (+2: the outcome and drift processors).
        prismaProvider(config.DATABASE_URL, config.WORKER_CONCURRENCY + 5),
        PrismaCloser,
        WorkerMetrics,
        MetricsServer,
        LiveEventsPublisher,
        RecomputeService,
        RecomputeProcessor,
        Reconciler,
        OutcomeService,
        OutcomeProcessor,
        DriftService,
        DriftProcessor,
        DriftTrigger,
      ],
    };
  }
}
