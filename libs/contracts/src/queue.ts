import { z } from 'zod';

/**
 * Work that crosses from the API to the worker through BullMQ. Payloads carry ids only: the worker
 * reloads everything from Postgres, so a retried or duplicated job is harmless.
 */
export const RECOMPUTE_QUEUE = 'recompute';

export const RecomputeJob = z.object({
  batchId: z.uuid(),
  /** Why the recompute was asked for; informational only (logs, metrics). 'calibration': the product's lab
   *  calibration in force changed (worker's outcome job, for the product's loads still in the bath). */
  reason: z.enum(['samples', 'load-event', 'heat', 'spec', 'lab-result', 'calibration', 'reconcile', 'manual']),
});
export type RecomputeJob = z.infer<typeof RecomputeJob>;

/**
 * BullMQ deduplication id for a batch's recompute, never used as a fixed jobId: a fixed jobId would silently
 * drop a request that arrives while the previous job runs.
 */
export function recomputeDedupId(batchId: string): string {
  return `recompute:${batchId}`;
}

/**
 * Options of every recompute job, whoever adds it (the api after a write, the worker's reconciler, tools), as a
 * plain object so this package needs no BullMQ. Coalescing per batch (BullMQ 6.7 deduplication with
 * `keepLastIfActive`, no ttl, no replace):
 *  - while the batch's job waits, an add folds into it (it reads everything from Postgres when it starts);
 *  - while it is active, the add is kept aside (one per batch, the latest overwrites) and becomes a new job when
 *    the active one completes or fails for good, so data posted during a recompute is always recomputed after it;
 *  - so a batch has at most one job active and one waiting however fast it is posted to.
 * No debounce delay: a post to an idle worker is recomputed at once, and the posts that arrive meanwhile are
 * folded into the one follow-up. (`replace` would push a delayed job back on every add and starve a batch that is
 * posted to faster than the delay; a ttl lets the key expire under a waiting job, the old pile-up: see
 * docs/reliability.md.)
 */
export function recomputeJobOptions(batchId: string) {
  return {
    deduplication: { id: recomputeDedupId(batchId), keepLastIfActive: true },
    removeOnComplete: 1000,
    removeOnFail: 5000,
    attempts: 5,
    backoff: { type: 'exponential', delay: 1000 },
  } as const;
}
