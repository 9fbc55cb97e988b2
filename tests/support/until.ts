/** Polls `probe` until it returns something truthy (returned), or throws naming `what` after `timeoutMs`. */
export async function until<T>(what: string, probe: () => Promise<T | null | undefined | false>, options: { timeoutMs?: number; everyMs?: number } = {}): Promise<T> {
  const deadline = Date.now() + (options.timeoutMs ?? 120_000);
  for (;;) {
    const value = await probe();
    if (value) return value;
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, options.everyMs ?? 100));
  }
}
