import { z } from 'zod';

/**
 * Work that crosses from the API to the worker through BullMQ. Payloads carry ids only: the worker
 * reloads everything from Postgres, so a retried or duplicated job is harmless.
 */
export const RECOMPUTE_QUEUE = 'recompute';

/** Debounce window: samples arriving within it for one batch fold into one recompute. */
export const RECOMPUTE_DEBOUNCE_MS = 250;

export const RecomputeJob = z.object({
  batchId: z.uuid(),
  /** Why the recompute was asked for; informational only (logs, metrics). */
  reason: z.enum(['samples', 'load-event', 'heat', 'spec', 'lab-result', 'reconcile', 'manual']),
});
export type RecomputeJob = z.infer<typeof RecomputeJob>;

/**
 * BullMQ deduplication id for a batch's recompute. Used with `deduplication: { id, ttl, extend, replace }`
 * semantics (keep the last request while one is active), never as a fixed jobId: a fixed jobId would
 * silently drop a request that arrives while the previous job runs.
 */
export function recomputeDedupId(batchId: string): string {
  return `recompute:${batchId}`;
}
