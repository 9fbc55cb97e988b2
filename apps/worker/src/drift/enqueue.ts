import type { Queue } from 'bullmq';
import { DRIFT_DEBOUNCE_MS, driftDedupId, outcomeDedupId, type DriftJob, type OutcomeJob } from '@ausline/contracts';

/**
 * Both follow-up queues are coalesced like the recompute (libs/contracts recomputeJobOptions): BullMQ deduplication
 * with `keepLastIfActive`, keyed by batch (outcome) or by product spec and line (drift), so at most one job is
 * active and one waiting per key, and an add while one runs is run after it. Unlike the recompute they keep a short
 * delay, counted from the first add (no `replace`: a burst never pushes the job back), since a burst of recomputes
 * of one product's batches should make one drift evaluation and nobody waits on its screen for it. Never a fixed
 * job id, bounded retention, exponential retries. Payloads carry ids only; the jobs reload everything from Postgres.
 */
const COMMON = {
  delay: DRIFT_DEBOUNCE_MS,
  removeOnComplete: 1000,
  removeOnFail: 5000,
  attempts: 5,
  backoff: { type: 'exponential', delay: 1000 },
} as const;

export function enqueueOutcome(queue: Queue<OutcomeJob>, batchId: string, reason: OutcomeJob['reason']) {
  return queue.add('outcome', { batchId, reason }, { ...COMMON, deduplication: { id: outcomeDedupId(batchId), keepLastIfActive: true } });
}

export function enqueueDrift(queue: Queue<DriftJob>, productSpecId: string, lineId: string, reason: DriftJob['reason']) {
  return queue.add('drift', { productSpecId, lineId, reason }, { ...COMMON, deduplication: { id: driftDedupId(productSpecId, lineId), keepLastIfActive: true } });
}
