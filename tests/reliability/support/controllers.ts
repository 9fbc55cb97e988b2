/**
 * A line controller as the fault tests need it: a store-and-forward outbox, one request in flight, and a
 * retry of the SAME request with the SAME Idempotency-Key until the service answers 2xx, whatever goes
 * wrong meanwhile (connection refused, a 5xx while Postgres restarts, a 409 while an earlier attempt of
 * the key is still counted as in flight, a reply cut off). Backoff with full jitter. A 4xx other than
 * 408/409/429 can never succeed by retrying: it is recorded as refused and dropped (the tests demand
 * none). Bounded: the loop stops by itself at its deadline.
 */
import { randomUUID } from 'node:crypto';

export interface OutboxItem {
  /** Path under the api, e.g. /v1/equipment/<id>/samples */
  path: string;
  body: unknown;
  /** Called with the reply body once the item is acknowledged (2xx). */
  onAck?: (reply: unknown) => void;
}

export interface ControllerStats {
  sent: number;
  acknowledged: number;
  /** Attempts after the first, summed over items. */
  retries: number;
  /** Attempts per outcome: 'network', 'timeout', '500', '409', ... */
  failures: Record<string, number>;
  /** Items refused for good (4xx that retrying cannot fix), with the reply. */
  refused: Array<{ path: string; status: number; body: string }>;
  /** Longest time one item waited from its first attempt to its acknowledgement. */
  longestItemMs: number;
}

export interface ControllerOptions {
  name: string;
  baseUrl: string;
  authorization: string;
  backoffBaseMs?: number;
  backoffCapMs?: number;
  requestTimeoutMs?: number;
}

const RETRYABLE_4XX = new Set([408, 409, 429]);

export class RetryingController {
  readonly stats: ControllerStats = { sent: 0, acknowledged: 0, retries: 0, failures: {}, refused: [], longestItemMs: 0 };
  private readonly outbox: Array<OutboxItem & { key: string }> = [];
  private closed = false;
  private wake: (() => void) | null = null;

  constructor(private readonly options: ControllerOptions) {}

  get pending(): number {
    return this.outbox.length;
  }

  send(item: OutboxItem): void {
    this.outbox.push({ ...item, key: `${this.options.name}-${randomUUID()}` });
    this.wake?.();
  }

  /** No more items will be added; run() returns once the outbox is empty. */
  close(): void {
    this.closed = true;
    this.wake?.();
  }

  /** Sends until closed and empty, or until `deadline` (epoch ms), whichever comes first. */
  async run(deadline: number): Promise<void> {
    while (Date.now() < deadline) {
      const item = this.outbox[0];
      if (!item) {
        if (this.closed) return;
        await new Promise<void>((resolve) => {
          this.wake = resolve;
          setTimeout(resolve, 200);
        });
        this.wake = null;
        continue;
      }
      const firstAttempt = Date.now();
      for (let attempt = 0; Date.now() < deadline; attempt++) {
        if (attempt > 0) this.stats.retries++;
        this.stats.sent++;
        const outcome = await this.attempt(item);
        if (outcome === 'ack' || outcome === 'refused') break;
        this.stats.failures[outcome] = (this.stats.failures[outcome] ?? 0) + 1;
        const cap = Math.min(this.options.backoffCapMs ?? 2_000, (this.options.backoffBaseMs ?? 100) * 2 ** Math.min(attempt, 10));
        await new Promise((resolve) => setTimeout(resolve, Math.random() * cap));
      }
      if (Date.now() >= deadline && this.outbox[0] === item) return; // unacknowledged: the test sees it pending
      this.stats.longestItemMs = Math.max(this.stats.longestItemMs, Date.now() - firstAttempt);
      this.outbox.shift();
    }
  }

  private async attempt(item: OutboxItem & { key: string }): Promise<'ack' | 'refused' | string> {
    let res: Response;
    try {
      res = await fetch(`${this.options.baseUrl}${item.path}`, {
        method: 'POST',
        headers: { 'content-type': 'application/json', authorization: this.options.authorization, 'idempotency-key': item.key },
        body: JSON.stringify(item.body),
        signal: AbortSignal.timeout(this.options.requestTimeoutMs ?? 10_000),
      });
    } catch (error) {
      return error instanceof Error && error.name === 'TimeoutError' ? 'timeout' : 'network';
    }
    let text: string;
    try {
      text = await res.text();
    } catch {
      return 'network'; // reply cut off
    }
    if (res.status >= 200 && res.status < 300) {
      this.stats.acknowledged++;
      item.onAck?.(text ? JSON.parse(text) : null);
      return 'ack';
    }
    if (res.status >= 400 && res.status < 500 && !RETRYABLE_4XX.has(res.status)) {
      this.stats.refused.push({ path: item.path, status: res.status, body: text.slice(0, 500) });
      return 'refused';
    }
    return String(res.status);
  }
}
