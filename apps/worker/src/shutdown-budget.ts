/**
 * Shutdown is bounded by SHUTDOWN_TIMEOUT_MS (the process entry exits when it runs out). Within it, the
 * BullMQ worker drains for most of the time and the database pool gets a share at the end, so an
 * in-process close (tests, startWorker().close()) is bounded too.
 */
export const DRAIN_SHARE = 0.6;
export const DISCONNECT_SHARE = 0.25;

/** Waits for `promise` at most `ms`; true when it settled in time. Never rejects. */
export async function settledWithin(promise: Promise<unknown>, ms: number): Promise<boolean> {
  let timer: NodeJS.Timeout | undefined;
  const timeout = new Promise<false>((resolve) => (timer = setTimeout(() => resolve(false), ms)));
  try {
    return await Promise.race([promise.then(() => true, () => true), timeout]);
  } finally {
    clearTimeout(timer);
  }
}
