import type { Queue } from 'bullmq';
import { DRIFT_DEBOUNCE_MS, driftDedupId, outcomeDedupId, type DriftJob, type OutcomeJob } from '@ausline/contracts';

/**
 * Both follow-up queues are enqueued like the recompute (API-CONTRACTS.md "Queue"): debounced BullMQ
 * deduplication keyed by batch (outcome) or by product spec and line (drift), never a fixed job id, bounded
 * retention, exponential retries. Payloads carry ids only; the jobs reload everything from Postgres.
 */
const COMMON = {
  delay: DRIFT_DEBOUNCE_MS,
  removeOnComplete: 1000,
  removeOnFail: 5000,
  attempts: 5,
  backoff: { type: 'exponential', delay: 1000 },
} as const;

export function enqueueOutcome(queue: Queue<OutcomeJob>, batchId: string, reason: OutcomeJob['reason']) {
  return queue.add('outcome', { batchId, reason }, { ...COMMON, deduplication: { id: outcomeDedupId(batchId), ttl: DRIFT_DEBOUNCE_MS, extend: true, replace: true } });
}

export function enqueueDrift(queue: Queue<DriftJob>, productSpecId: string, lineId: string, reason: DriftJob['reason']) {
  return queue.add(
    'drift',
    { productSpecId, lineId, reason },
    { ...COMMON, deduplication: { id: driftDedupId(productSpecId, lineId), ttl: DRIFT_DEBOUNCE_MS, extend: true, replace: true } },
  );
}
