import type { Queue } from 'bullmq';
import { RECOMPUTE_DEBOUNCE_MS, recomputeDedupId, type RecomputeJob } from '@ausline/contracts';

/**
 * Adds a recompute with the options the api uses (API-CONTRACTS.md "Queue"): debounced BullMQ
 * deduplication keyed by batch, never a fixed job id, bounded retention, exponential retries.
 */
export function enqueueRecompute(queue: Queue<RecomputeJob>, batchId: string, reason: RecomputeJob['reason']) {
  return queue.add(
    'recompute',
    { batchId, reason },
    {
      deduplication: { id: recomputeDedupId(batchId), ttl: RECOMPUTE_DEBOUNCE_MS, extend: true, replace: true },
      delay: RECOMPUTE_DEBOUNCE_MS,
      removeOnComplete: 1000,
      removeOnFail: 5000,
      attempts: 5,
      backoff: { type: 'exponential', delay: 1000 },
    },
  );
}
