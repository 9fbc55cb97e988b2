import 'reflect-metadata';
import { NestFactory } from '@nestjs/core';
import type { INestApplicationContext } from '@nestjs/common';
import type { AppConfig } from '@ausline/contracts';
import { WorkerLogger } from './logger.js';
import { MetricsServer } from './ops/metrics-server.js';
import { Reconciler } from './reconcile/reconciler.js';
import { DEFAULT_PREDICTION_SAMPLES, type WorkerRuntimeOptions } from './worker-config.js';
import { WorkerModule } from './worker.module.js';

export interface StartWorkerOptions extends Partial<WorkerRuntimeOptions> {
  logger?: WorkerLogger;
  /** Register SIGTERM/SIGINT handlers (the process entry does; in-process tests do not). */
  shutdownHooks?: boolean;
}

export interface RunningWorker {
  app: INestApplicationContext;
  /** Base URL of /metrics and /health, or null when disabled. */
  metricsUrl: string | null;
  /** One full reconcile pass now, stale and in-progress batches (tests; the interval runs by itself). */
  reconcileOnce(): ReturnType<Reconciler['tick']>;
  /** Graceful, bounded shutdown (drains running jobs within the configured budget). Idempotent. */
  close(): Promise<void>;
}

/**
 * Starts a worker in this process: a Nest application context (no HTTP server) with the recompute
 * processor and the reconciler. `node apps/worker/dist/main.js` calls it; tests call it in-process.
 */
export async function startWorker(config: AppConfig, options: StartWorkerOptions = {}): Promise<RunningWorker> {
  const logger = options.logger ?? new WorkerLogger(config.LOG_LEVEL);
  const runtime: WorkerRuntimeOptions = {
    metricsPort: options.metricsPort === undefined ? config.WORKER_METRICS_PORT : options.metricsPort,
    metricsHost: options.metricsHost ?? config.HOST,
    aliveFile: options.aliveFile === undefined ? '/tmp/ausline-worker.alive' : options.aliveFile,
    reconcile: options.reconcile ?? true,
    inProgressWithinMs: options.inProgressWithinMs ?? 48 * 3600_000,
    inProgressEveryTicks: options.inProgressEveryTicks ?? 3,
    prediction: options.prediction ?? { samples: DEFAULT_PREDICTION_SAMPLES, seed: 1 },
  };
  const app = await NestFactory.createApplicationContext(WorkerModule.forRoot(config, runtime, logger), { logger, abortOnError: false });
  if (options.shutdownHooks) app.enableShutdownHooks(['SIGTERM', 'SIGINT']);
  await app.init();
  let closing: Promise<void> | null = null;
  return {
    app,
    metricsUrl: app.get(MetricsServer).url,
    reconcileOnce: () => app.get(Reconciler).tick(true),
    close: () => (closing ??= app.close()),
  };
}
