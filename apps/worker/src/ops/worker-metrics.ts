import { Injectable } from '@nestjs/common';
import { Counter, Histogram, Registry, collectDefaultMetrics } from 'prom-client';

/**
 * Prometheus metrics of one worker process, in its own registry (nothing crosses processes; the api has
 * its own). Served on GET /metrics by MetricsServer. Names follow the api's: ausline_ prefix, base units.
 */
@Injectable()
export class WorkerMetrics {
  readonly registry = new Registry();

  /** Same name and labels as the api declares, so dashboards find one series per queue and outcome. */
  readonly jobDurationSeconds = new Histogram({
    name: 'ausline_job_duration_seconds',
    help: 'Queue job processing time in seconds by queue and outcome',
    labelNames: ['queue', 'outcome'] as const,
    buckets: [0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60],
    registers: [this.registry],
  });

  readonly deviationChangesTotal = new Counter({
    name: 'ausline_deviation_changes_total',
    help: 'Deviation changes written by recomputes, by kind (opened, refreshed, reopened, cleared, noted)',
    labelNames: ['kind'] as const,
    registers: [this.registry],
  });

  readonly reconcileEnqueuedTotal = new Counter({
    name: 'ausline_reconcile_enqueued_total',
    help: 'Recomputes enqueued by the reconciler, by source (stale = could not be queued by the api; in-progress = re-evaluated as time passes)',
    labelNames: ['source'] as const,
    registers: [this.registry],
  });

  readonly reconcileErrorsTotal = new Counter({
    name: 'ausline_reconcile_errors_total',
    help: 'Reconciler ticks that failed (Postgres or Redis unreachable)',
    registers: [this.registry],
  });

  constructor() {
    collectDefaultMetrics({ register: this.registry, prefix: 'ausline_worker_' });
  }
}
