import { DEFAULT_TIMEOUT_MS, TransportError, classifyReply, httpRequest, messageOf, type HttpReply } from './http.js';

/**
 * One plant controller's store-and-forward link to Ausline (practice.md §5.3, §5.4). The demo plant has one
 * per line (the line PLC running furnace, transfer and bath) and one for the lab:
 *  - every reading and event goes into a bounded outbox first, in order;
 *  - a sender posts the outbox oldest-first: consecutive samples of one piece of equipment as one request
 *    (up to maxChunk), every other record on its own, a group of records concurrently;
 *  - a record leaves the outbox only when the server acknowledged it (2xx) or refused it for good;
 *  - a failed request is sent again unchanged, with the same Idempotency-Key, after an exponential backoff
 *    with full jitter (honouring Retry-After), so a retry is never stored twice;
 *  - a record whose dependency is not yet acknowledged (an event of a batch not yet created) waits at the
 *    head of the outbox: order is kept, as it is on a real controller.
 *
 * The outbox lives in memory here. A real controller writes it to non-volatile storage first so a reboot
 * loses nothing; the simulator's data can always be regenerated, so it does not.
 */

export interface SampleRecord {
  /** The equipment the channel belongs to (samples are posted per equipment). */
  equipmentId: string;
  channel: string;
  /** Device time, epoch ms. */
  tMs: number;
  value: number;
}

export interface RequestRecord {
  /** For logs: 'CHARGED L1-250304-0615'. */
  describe: string;
  /** The request; null while a dependency is not acknowledged yet (the record waits); 'skip' when the
   *  dependency was refused for good (the record can never be sent and is dropped, logged). */
  prepare(): { method: 'POST'; path: string; body: unknown } | null | 'skip';
  onAck?(reply: HttpReply): void;
  onReject?(reply: HttpReply): void;
}

/** Requests sent together, concurrently (e.g. the four events of a load released at once: they reach the
 *  server within one round trip, so its per-batch coalesced recompute folds them into at most one
 *  follow-up job instead of one recompute per event). */
export interface RequestGroup {
  describe: string;
  requests: RequestRecord[];
}

type OutboxRecord = { seq: number } & (
  | { kind: 'sample'; sample: SampleRecord }
  | { kind: 'request'; request: RequestRecord }
  | { kind: 'group'; group: RequestGroup }
);

/** One HTTP request of the record(s) in flight; `done` once acknowledged or refused for good. */
interface Part {
  key: string;
  method: 'POST';
  path: string;
  body: unknown;
  /** The request record it came from; absent for a sample chunk. */
  request?: RequestRecord;
  done: boolean;
}

interface InFlight {
  records: OutboxRecord[];
  parts: Part[];
  /** Samples in the chunk (0 for requests). */
  sampleCount: number;
  attempts: number;
}

export interface ControllerOptions {
  /** Line code or 'lab'. */
  name: string;
  baseUrl: string;
  apiKey: string;
  /** Distinguishes this run's Idempotency-Keys from an earlier run's (keys are scoped per API key). */
  runId: string;
  /** Samples per request (the API takes up to 10,000). */
  maxChunk?: number;
  /** Records the outbox holds. */
  capacity?: number;
  /**
   * When full: 'block' makes hasRoom() false so an accelerated simulation waits (nothing is lost);
   * 'drop-oldest' is what a real-time controller must do: the oldest queued readings are lost and counted.
   */
  overflow?: 'block' | 'drop-oldest';
  backoffBaseMs?: number;
  backoffCapMs?: number;
  timeoutMs?: number;
  log?: (event: SimLogEvent) => void;
  /** Uniform [0, 1) for the jitter; seeded in tests. */
  random?: () => number;
}

export interface SimLogEvent {
  level: 'debug' | 'info' | 'warn' | 'error';
  msg: string;
  [key: string]: unknown;
}

export interface ControllerStats {
  name: string;
  requestsOk: number;
  /** Attempts that failed and were (or will be) sent again. */
  retries: number;
  samplesAcked: number;
  /** Sums of the API's replies to sample posts. */
  samplesStored: number;
  samplesDuplicate: number;
  samplesConflict: number;
  /** Records the server refused for good (logged). */
  rejected: number;
  /** Samples lost to a full outbox (drop-oldest only). */
  droppedOverflow: number;
  pending: number;
  lastError: string | null;
}

const sleep = (ms: number) => new Promise<void>((resolve) => setTimeout(resolve, ms));

export class Controller {
  private readonly queue: OutboxRecord[] = [];
  private head = 0;
  private nextSeq = 1;
  private inFlight: InFlight | null = null;
  private stopping = false;
  private abandonAtMs = Number.POSITIVE_INFINITY;
  private wakeUp: (() => void) | null = null;
  private running: Promise<void> | null = null;
  private chunk: number;
  private readonly capacity: number;
  private readonly stats: Omit<ControllerStats, 'name' | 'pending'>;

  constructor(readonly options: ControllerOptions) {
    this.chunk = options.maxChunk ?? 5000;
    this.capacity = options.capacity ?? 500_000;
    this.stats = { requestsOk: 0, retries: 0, samplesAcked: 0, samplesStored: 0, samplesDuplicate: 0, samplesConflict: 0, rejected: 0, droppedOverflow: 0, lastError: null };
  }

  get name(): string {
    return this.options.name;
  }

  /** Records waiting, including the one in flight. */
  pending(): number {
    return this.queue.length - this.head;
  }

  idle(): boolean {
    return this.pending() === 0 && this.inFlight === null;
  }

  hasRoom(records = 0): boolean {
    return this.pending() + records <= this.capacity;
  }

  report(): ControllerStats {
    return { name: this.options.name, ...this.stats, pending: this.pending() };
  }

  pushSamples(samples: readonly SampleRecord[]): void {
    for (const sample of samples) {
      if (!this.hasRoom(1) && this.options.overflow === 'drop-oldest') this.dropOldestSample();
      this.queue.push({ seq: this.nextSeq++, kind: 'sample', sample });
    }
    this.signal();
  }

  /** Events and other requests are never dropped, whatever the fill level. */
  pushRequest(request: RequestRecord): void {
    this.queue.push({ seq: this.nextSeq++, kind: 'request', request });
    this.signal();
  }

  /** Requests posted together, concurrently, once all are ready; each acknowledged or retried on its own. */
  pushGroup(group: RequestGroup): void {
    this.queue.push({ seq: this.nextSeq++, kind: 'group', group });
    this.signal();
  }

  start(): void {
    this.running ??= this.loop();
  }

  /**
   * Stops once the outbox is empty, or at `deadlineMs` (epoch ms) with whatever is left unsent (counted in
   * report().pending); resolves when the sender has ended.
   */
  async stop(options: { deadlineMs?: number } = {}): Promise<void> {
    this.stopping = true;
    this.abandonAtMs = options.deadlineMs ?? Number.POSITIVE_INFINITY;
    this.signal();
    await this.running;
  }

  private signal(): void {
    const wake = this.wakeUp;
    this.wakeUp = null;
    wake?.();
  }

  private waitForWork(ms: number): Promise<void> {
    return new Promise((resolve) => {
      const timer = setTimeout(() => {
        this.wakeUp = null;
        resolve();
      }, ms);
      this.wakeUp = () => {
        clearTimeout(timer);
        resolve();
      };
    });
  }

  private dropOldestSample(): void {
    const inFlightCount = this.inFlight?.records.length ?? 0;
    for (let i = this.head + inFlightCount; i < this.queue.length; i++) {
      if (this.queue[i]!.kind === 'sample') {
        this.queue.splice(i, 1);
        this.stats.droppedOverflow += 1;
        if (this.stats.droppedOverflow % 1000 === 1) {
          this.options.log?.({ level: 'warn', msg: 'outbox full: oldest readings are being lost', controller: this.name, dropped: this.stats.droppedOverflow });
        }
        return;
      }
    }
  }

  private compact(): void {
    if (this.head > 10_000 && this.head * 2 > this.queue.length) {
      this.queue.splice(0, this.head);
      this.head = 0;
    }
  }

  /** The next request(s) from the head of the outbox, or null when the head record is not ready. */
  private form(): InFlight | null {
    const first = this.queue[this.head]!;
    if (first.kind === 'request' || first.kind === 'group') {
      const requests = first.kind === 'request' ? [first.request] : first.group.requests;
      const prepared = requests.map((r) => r.prepare());
      if (prepared.some((p) => p === 'skip')) {
        this.options.log?.({ level: 'error', msg: 'dependency refused; record dropped', controller: this.name, what: describe(first) });
        this.stats.rejected += requests.length;
        this.head += 1;
        return this.pending() > 0 ? this.form() : null;
      }
      if (prepared.some((p) => p === null)) return null;
      const parts = prepared.map((p, i) => {
        const request = p as { method: 'POST'; path: string; body: unknown };
        return { key: this.keyFor(first.seq, first.seq, requests.length > 1 ? i : undefined), ...request, request: requests[i], done: false };
      });
      return { records: [first], parts, sampleCount: 0, attempts: 0 };
    }
    // Consecutive samples of one piece of equipment make one request.
    const equipmentId = first.sample.equipmentId;
    const records: OutboxRecord[] = [];
    const samples: Array<{ channel: string; t: number; value: number }> = [];
    for (let i = this.head; i < this.queue.length && records.length < this.chunk; i++) {
      const r = this.queue[i]!;
      if (r.kind !== 'sample' || r.sample.equipmentId !== equipmentId) break;
      records.push(r);
      samples.push({ channel: r.sample.channel, t: r.sample.tMs, value: r.sample.value });
    }
    const key = this.keyFor(records[0]!.seq, records[records.length - 1]!.seq);
    return { records, parts: [{ key, method: 'POST', path: `/v1/equipment/${equipmentId}/samples`, body: { samples }, done: false }], sampleCount: records.length, attempts: 0 };
  }

  /** Deterministic per request (practice.md §5.4: hash of device and sequence range). */
  private keyFor(firstSeq: number, lastSeq: number, part?: number): string {
    return `${this.options.runId}.${this.options.name}.${firstSeq}-${lastSeq}${part === undefined ? '' : `.${part}`}`;
  }

  private backoffMs(attempts: number, retryAfterMs: number | null): number {
    const base = this.options.backoffBaseMs ?? 250;
    const cap = this.options.backoffCapMs ?? 15_000;
    const ceiling = Math.min(cap, base * 2 ** Math.min(attempts - 1, 20));
    const jittered = (this.options.random ?? Math.random)() * ceiling; // "full jitter"
    return Math.max(jittered, retryAfterMs ?? 0);
  }

  private release(flight: InFlight): void {
    this.head += flight.records.length;
    this.inFlight = null;
    this.compact();
  }

  private async loop(): Promise<void> {
    for (;;) {
      if (this.stopping && Date.now() >= this.abandonAtMs) return;
      if (this.pending() === 0) {
        if (this.stopping) return;
        await this.waitForWork(200);
        continue;
      }
      const flight = this.inFlight ?? this.form();
      if (!flight) {
        if (this.stopping && this.pending() === 0) return;
        await this.waitForWork(50);
        continue;
      }
      this.inFlight = flight;
      flight.attempts += 1;
      const open = flight.parts.filter((p) => !p.done);
      const outcomes = await Promise.all(open.map((part) => this.send(part)));
      let retry: { error: string; retryAfterMs: number | null } | null = null;
      let split = false;
      open.forEach((part, i) => {
        const { reply, failure } = outcomes[i]!;
        const outcome = reply ? classifyReply(reply) : 'retry';
        if (outcome === 'ok' && reply) {
          part.done = true;
          this.acknowledge(flight, part, reply);
        } else if (outcome === 'too-large' && flight.sampleCount > 1) {
          split = true;
        } else if (outcome === 'retry') {
          retry = { error: failure ?? `HTTP ${reply?.status}: ${messageOf(reply?.body)}`, retryAfterMs: reply?.retryAfterMs ?? null };
        } else {
          // Refused for good: log it, count it, move on.
          part.done = true;
          this.stats.rejected += flight.sampleCount || 1;
          this.stats.lastError = `HTTP ${reply?.status}: ${messageOf(reply?.body)}`;
          this.options.log?.({
            level: 'error',
            msg: 'refused by the API; dropped',
            controller: this.name,
            what: part.request?.describe ?? `${flight.sampleCount} samples`,
            status: reply?.status,
            error: messageOf(reply?.body),
          });
          if (reply) part.request?.onReject?.(reply);
        }
      });
      if (split) {
        this.chunk = Math.max(1, Math.floor(flight.sampleCount / 2));
        this.inFlight = null; // re-formed smaller, under a new key: the server stored nothing of it
        continue;
      }
      if (flight.parts.every((p) => p.done)) {
        this.release(flight);
        continue;
      }
      const failed = retry as { error: string; retryAfterMs: number | null } | null;
      this.stats.retries += 1;
      this.stats.lastError = failed?.error ?? 'unknown';
      const delay = this.backoffMs(flight.attempts, failed?.retryAfterMs ?? null);
      if (flight.attempts === 1 || flight.attempts % 10 === 0) {
        this.options.log?.({ level: 'warn', msg: 'post failed; keeping it and retrying', controller: this.name, attempt: flight.attempts, error: this.stats.lastError, retryInMs: Math.round(delay), pending: this.pending() });
      }
      await sleep(Math.min(delay, Math.max(0, this.abandonAtMs - Date.now())));
    }
  }

  private async send(part: Part): Promise<{ reply: HttpReply | null; failure: string | null }> {
    try {
      const reply = await httpRequest(this.options.baseUrl, part.method, part.path, {
        credentials: { apiKey: this.options.apiKey },
        body: part.body,
        idempotencyKey: part.key,
        timeoutMs: this.options.timeoutMs ?? DEFAULT_TIMEOUT_MS,
      });
      return { reply, failure: null };
    } catch (error) {
      if (!(error instanceof TransportError)) throw error;
      return { reply: null, failure: error.message };
    }
  }

  private acknowledge(flight: InFlight, part: Part, reply: HttpReply): void {
    this.stats.requestsOk += 1;
    if (part.request) {
      part.request.onAck?.(reply);
      return;
    }
    const body = (reply.body ?? {}) as { stored?: number; duplicates?: number; conflicts?: number };
    this.stats.samplesAcked += flight.sampleCount;
    this.stats.samplesStored += body.stored ?? 0;
    this.stats.samplesDuplicate += body.duplicates ?? 0;
    this.stats.samplesConflict += body.conflicts ?? 0;
  }
}

function describe(record: OutboxRecord): string {
  if (record.kind === 'request') return record.request.describe;
  if (record.kind === 'group') return record.group.describe;
  return 'samples';
}
