import { collectDefaultMetrics, Counter, Gauge, Histogram, Registry } from 'prom-client';

/**
 * Prometheus metrics of one process, served by GET /metrics. The metric objects are process-wide
 * singletons: import and feed them where the thing happens, e.g.
 *
 *   import { ingestSamplesTotal } from '../ops/metrics.js';
 *   ingestSamplesTotal.inc({ outcome: 'stored' }, stored);
 *
 * This file imports nothing from Nest, so a worker process can build the same metrics on its own
 * registry and serve them (see createJobMetrics).
 *
 * Naming follows Prometheus practice: ausline_ prefix, base units (seconds), _total for counters.
 */
export const metricsRegistry = new Registry();
collectDefaultMetrics({ register: metricsRegistry, prefix: 'ausline_' });

/** Every HTTP request, by route pattern (not raw path) and status. Fed by the request log middleware. */
export const httpRequestsTotal = new Counter({
  name: 'ausline_http_requests_total',
  help: 'HTTP requests by method, route pattern and status',
  labelNames: ['method', 'route', 'status'] as const,
  registers: [metricsRegistry],
});

export const httpRequestDurationSeconds = new Histogram({
  name: 'ausline_http_request_duration_seconds',
  help: 'HTTP request duration in seconds by method and route pattern',
  labelNames: ['method', 'route'] as const,
  buckets: [0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10],
  registers: [metricsRegistry],
});

/**
 * Ingest requests by kind ('samples', 'load-event', 'heat', 'heat-csv', 'lab-result', 'batch', 'spec')
 * and outcome ('accepted' = stored, 'duplicate' = idempotent replay, 'rejected' = 4xx). Fed by ingest code.
 */
export const ingestRequestsTotal = new Counter({
  name: 'ausline_ingest_requests_total',
  help: 'Ingest requests by kind and outcome',
  labelNames: ['kind', 'outcome'] as const,
  registers: [metricsRegistry],
});

/** Samples received, by outcome: 'stored' (new), 'duplicate' (already had (channel, t)), 'rejected'. */
export const ingestSamplesTotal = new Counter({
  name: 'ausline_ingest_samples_total',
  help: 'Samples received by outcome',
  labelNames: ['outcome'] as const,
  registers: [metricsRegistry],
});

/** Recompute enqueues that failed (Redis down) and left the batch marked stale for the reconciler. */
export const recomputeEnqueueFailuresTotal = new Counter({
  name: 'ausline_recompute_enqueue_failures_total',
  help: 'Recompute jobs that could not be enqueued (batch marked stale instead)',
  registers: [metricsRegistry],
});

export type QueueCounts = Record<string, number>;
type QueueCountsReader = () => Promise<QueueCounts>;
const queueDepthSources = new Map<string, QueueCountsReader>();

/** How long a scrape waits for Redis before it leaves the queue depth out. */
const QUEUE_DEPTH_TIMEOUT_MS = 1_000;

/**
 * Jobs per queue and state (waiting, active, delayed, failed, ...), read from Redis at scrape time
 * from the sources registered with registerQueueDepthSource. When Redis does not answer in time the
 * series are left out of that scrape (and ausline_queue_depth_scrape_errors_total counts it).
 */
export const queueJobs = new Gauge({
  name: 'ausline_queue_jobs',
  help: 'Jobs in each queue by state, read at scrape time',
  labelNames: ['queue', 'state'] as const,
  registers: [metricsRegistry],
  async collect() {
    this.reset();
    await Promise.all(
      [...queueDepthSources].map(async ([queue, read]) => {
        try {
          const counts = await withTimeout(read(), QUEUE_DEPTH_TIMEOUT_MS);
          for (const [state, count] of Object.entries(counts)) this.set({ queue, state }, count);
        } catch {
          queueDepthScrapeErrorsTotal.inc({ queue });
        }
      }),
    );
  },
});

export const queueDepthScrapeErrorsTotal = new Counter({
  name: 'ausline_queue_depth_scrape_errors_total',
  help: 'Scrapes where a queue depth could not be read',
  labelNames: ['queue'] as const,
  registers: [metricsRegistry],
});

/**
 * Registers a reader of a queue's job counts (e.g. `() => queue.getJobCounts()`); returns the function
 * that removes it again (call it on shutdown).
 */
export function registerQueueDepthSource(queue: string, read: QueueCountsReader): () => void {
  queueDepthSources.set(queue, read);
  return () => {
    if (queueDepthSources.get(queue) === read) queueDepthSources.delete(queue);
  };
}

/**
 * Job duration histogram (processing time, seconds) by queue and outcome ('completed' | 'failed').
 * Jobs run in the worker process, which has its own registry and endpoint: call createJobMetrics
 * there with the worker's registry. The API registers one too so dashboards find the same name.
 */
export function createJobMetrics(registry: Registry): { jobDurationSeconds: Histogram<'queue' | 'outcome'> } {
  const jobDurationSeconds = new Histogram({
    name: 'ausline_job_duration_seconds',
    help: 'Queue job processing time in seconds by queue and outcome',
    labelNames: ['queue', 'outcome'] as const,
    buckets: [0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60],
    registers: [registry],
  });
  return { jobDurationSeconds };
}

export const { jobDurationSeconds } = createJobMetrics(metricsRegistry);

function withTimeout<T>(promise: Promise<T>, ms: number): Promise<T> {
  return new Promise<T>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`timed out after ${ms} ms`)), ms);
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
