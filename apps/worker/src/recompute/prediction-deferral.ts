/**
 * Longest a batch's prediction is put off while newer recomputes of it keep arriving (see PredictionDeferral).
 * Under sustained posting a batch still gets a prediction at least this often, plus one recompute.
 */
export const PREDICTION_MAX_DEFER_MS = 10_000;

/**
 * Decides, per batch, whether a recompute that has committed its process-window result may leave the prediction to
 * the recompute already queued behind it.
 *
 * Why: the queue keeps at most one recompute per batch active and one waiting (libs/contracts recomputeJobOptions),
 * so data posted while a recompute runs waits for the whole job, prediction included, and a prediction from scratch
 * takes seconds. When a newer recompute is already queued, this one's prediction would be superseded at once by a
 * prediction over newer data; skipping it lets the newer rules reach the screens sooner and saves the work.
 *
 * Bound: a batch posted to faster than its recomputes run would always have a successor queued and never be
 * predicted, so a streak of deferrals lasts at most `maxDeferMs`, then the recompute predicts anyway. The streak is
 * kept in this process only: after a restart, or on another worker process, a new streak starts, still bounded.
 * The last recompute of a burst has no successor and always predicts, so the final prediction reflects the last post.
 */
export class PredictionDeferral {
  /** Batch id → when its current streak of deferrals began (epoch ms). */
  private readonly streaks = new Map<string, number>();

  constructor(
    private readonly maxDeferMs = PREDICTION_MAX_DEFER_MS,
    private readonly now: () => number = Date.now,
  ) {}

  /** `successorQueued`: a newer recompute of the batch waits behind the running one. True = defer its prediction. */
  shouldDefer(batchId: string, successorQueued: boolean): boolean {
    const nowMs = this.now();
    const since = this.streaks.get(batchId);
    if (!successorQueued || (since !== undefined && nowMs - since >= this.maxDeferMs)) {
      this.streaks.delete(batchId);
      return false;
    }
    if (since === undefined) {
      this.forgetOld(nowMs);
      this.streaks.set(batchId, nowMs);
    }
    return true;
  }

  /** Streaks whose successor ran on another process are never closed here; drop them once long past the bound. */
  private forgetOld(nowMs: number): void {
    for (const [batchId, since] of this.streaks) if (nowMs - since > 2 * this.maxDeferMs) this.streaks.delete(batchId);
  }
}
