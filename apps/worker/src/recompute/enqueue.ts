import type { Queue } from 'bullmq';
import { recomputeJobOptions, type RecomputeJob } from '@ausline/contracts';

/**
 * Adds a recompute with the options the api uses (libs/contracts recomputeJobOptions: coalesced per batch by
 * BullMQ deduplication with keepLastIfActive, never a fixed job id, bounded retention, exponential retries).
 */
export function enqueueRecompute(queue: Queue<RecomputeJob>, batchId: string, reason: RecomputeJob['reason']) {
  return queue.add('recompute', { batchId, reason }, recomputeJobOptions(batchId));
}
