import { ApiError, type ApiClient } from './client.js';
import type { LiveEvent } from './types.js';
import { SseParser } from '../lib/sse.js';

/**
 * The live event stream (GET /v1/stream) for the whole app: one connection, many listeners.
 *
 * States, as the header shows them:
 *   connecting    first connection being opened
 *   live          connected; an event or heartbeat arrived within the last STALL_MS
 *   reconnecting  the connection dropped or went quiet; retrying with back-off
 *   down          no connection for DOWN_AFTER_MS; still retrying
 * The API sends a heartbeat every 15 s (STREAM_HEARTBEAT_S); silence for STALL_MS means the stream is
 * dead even if the socket looks open (a proxy or a sleeping network), so it is dropped and reopened.
 * Events missed while not live are not replayed by the API: on every return to live the listeners
 * get a resync and re-read what they show.
 */

export type StreamStatus = 'connecting' | 'live' | 'reconnecting' | 'down' | 'stopped';

export interface StreamState {
  status: StreamStatus;
  /** Last time anything (event or heartbeat) arrived. */
  lastSeenAt: number | null;
  /** When the connection was last lost (null while live). */
  lostAt: number | null;
}

const STALL_MS = 40_000;
const DOWN_AFTER_MS = 20_000;
const MAX_BACKOFF_MS = 15_000;

type Listener<T> = (value: T) => void;

export class LiveStream {
  private state: StreamState = { status: 'stopped', lastSeenAt: null, lostAt: null };
  private controller: AbortController | null = null;
  private watchdog: number | null = null;
  private retryTimer: number | null = null;
  private attempt = 0;
  private serverRetryMs = 3_000;
  private readonly eventListeners = new Set<Listener<LiveEvent>>();
  private readonly statusListeners = new Set<Listener<StreamState>>();
  private readonly resyncListeners = new Set<() => void>();
  private wasLive = false;

  constructor(private readonly api: ApiClient) {}

  get current(): StreamState {
    return this.state;
  }

  onEvent(listener: Listener<LiveEvent>): () => void {
    this.eventListeners.add(listener);
    return () => this.eventListeners.delete(listener);
  }

  onStatus(listener: Listener<StreamState>): () => void {
    this.statusListeners.add(listener);
    listener(this.state);
    return () => this.statusListeners.delete(listener);
  }

  /** Called when the stream comes back after a loss: re-read whatever you show. */
  onResync(listener: () => void): () => void {
    this.resyncListeners.add(listener);
    return () => this.resyncListeners.delete(listener);
  }

  start(): void {
    if (this.state.status !== 'stopped') return;
    this.set({ status: 'connecting', lostAt: null });
    this.watchdog = window.setInterval(() => this.check(), 2_000);
    void this.connect();
  }

  stop(): void {
    this.controller?.abort();
    this.controller = null;
    if (this.watchdog !== null) window.clearInterval(this.watchdog);
    if (this.retryTimer !== null) window.clearTimeout(this.retryTimer);
    this.watchdog = null;
    this.retryTimer = null;
    this.wasLive = false;
    this.set({ status: 'stopped', lostAt: null, lastSeenAt: null });
  }

  private set(patch: Partial<StreamState>): void {
    this.state = { ...this.state, ...patch };
    for (const l of this.statusListeners) l(this.state);
  }

  private check(): void {
    const now = Date.now();
    if (this.state.status === 'live' && this.state.lastSeenAt !== null && now - this.state.lastSeenAt > STALL_MS) {
      // Quiet for longer than two heartbeats: treat as dead and reopen.
      this.controller?.abort();
      this.lost();
      return;
    }
    if (this.state.status === 'reconnecting' && this.state.lostAt !== null && now - this.state.lostAt > DOWN_AFTER_MS) {
      this.set({ status: 'down' });
    }
  }

  private lost(): void {
    if (this.state.status === 'stopped') return;
    const lostAt = this.state.lostAt ?? Date.now();
    const status: StreamStatus = Date.now() - lostAt > DOWN_AFTER_MS ? 'down' : 'reconnecting';
    this.set({ status, lostAt });
    if (this.retryTimer !== null) return;
    const delay = Math.min(MAX_BACKOFF_MS, Math.max(this.serverRetryMs, 1_000) * 2 ** Math.min(this.attempt, 4));
    this.attempt += 1;
    this.retryTimer = window.setTimeout(() => {
      this.retryTimer = null;
      void this.connect();
    }, delay);
  }

  private async connect(): Promise<void> {
    if (this.state.status === 'stopped') return;
    const controller = new AbortController();
    this.controller = controller;
    let res: Response;
    try {
      res = await fetch(this.api.url('/v1/stream'), { headers: { accept: 'text/event-stream', ...this.api.authHeaders() }, cache: 'no-store', signal: controller.signal });
    } catch {
      if (this.controller === controller) this.lost();
      return;
    }
    if (res.status === 401) {
      // The session is over; the app's session handling takes it from here.
      this.stop();
      this.api.onSessionEnded?.(new ApiError('http', 401, 'Your session has ended', [], null));
      return;
    }
    if (!res.ok || !res.body) {
      this.lost();
      return;
    }
    this.attempt = 0;
    const resync = this.wasLive || this.state.lostAt !== null;
    this.wasLive = true;
    this.set({ status: 'live', lastSeenAt: Date.now(), lostAt: null });
    if (resync) for (const l of this.resyncListeners) l();

    const parser = new SseParser();
    const reader = res.body.pipeThrough(new TextDecoderStream()).getReader();
    try {
      for (;;) {
        const { value, done } = await reader.read();
        if (done) break;
        const chunk = parser.push(value);
        this.set({ lastSeenAt: Date.now() });
        if (chunk.retryMs !== null) this.serverRetryMs = chunk.retryMs;
        for (const m of chunk.messages) {
          let event: LiveEvent;
          try {
            event = JSON.parse(m.data) as LiveEvent;
          } catch {
            continue;
          }
          for (const l of this.eventListeners) l(event);
        }
      }
    } catch {
      // aborted or the network dropped: handled below
    }
    if (this.controller === controller && (this.state.status as StreamStatus) !== 'stopped') this.lost();
  }
}
