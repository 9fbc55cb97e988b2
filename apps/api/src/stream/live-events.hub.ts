import { Inject, Injectable, Optional, type OnApplicationShutdown, type OnModuleInit } from '@nestjs/common';
import { Redis } from 'ioredis';
import { Subject, type Observable } from 'rxjs';
import { LiveEvent } from '@ausline/contracts';
import { API_CONFIG, type ApiConfig } from '../app-config.js';
import { JsonLogger } from '../http/logger.js';
import { liveEventsChannel } from './channel.js';

export interface SequencedEvent {
  /** Per-instance sequence number, used as the SSE event id. */
  seq: number;
  event: LiveEvent;
}

/**
 * One dedicated Redis subscriber per API instance (a subscribed connection can run no other
 * command), fanned out to every open stream through an RxJS Subject. ioredis reconnects and
 * re-subscribes by itself after Redis comes back; events published while it was away are lost, which
 * is why dashboards re-read the REST lists when their stream reconnects.
 */
@Injectable()
export class LiveEventsHub implements OnModuleInit, OnApplicationShutdown {
  private readonly subscriber: Redis;
  private readonly channel: string;
  private readonly subject = new Subject<SequencedEvent>();
  private readonly logger: JsonLogger;
  private seq = 0;
  private lastErrorLogAt = 0;
  private subscribed: Promise<void> | undefined;

  constructor(@Inject(API_CONFIG) config: ApiConfig, @Optional() logger?: JsonLogger) {
    this.logger = logger ?? new JsonLogger(config.LOG_LEVEL);
    this.channel = liveEventsChannel(config.QUEUE_PREFIX);
    this.subscriber = new Redis(config.REDIS_URL, {
      lazyConnect: true,
      // Keep the SUBSCRIBE queued until the connection is up, however long that takes.
      maxRetriesPerRequest: null,
      connectTimeout: 2_000,
      retryStrategy: (attempt) => Math.min(attempt * 250, 5_000),
    });
    this.subscriber.on('error', (error) => this.logError(error));
    this.subscriber.on('message', (channel: string, message: string) => this.onMessage(channel, message));
  }

  get events$(): Observable<SequencedEvent> {
    return this.subject.asObservable();
  }

  onModuleInit(): void {
    this.subscriber.connect().catch(() => undefined);
    this.subscribed = this.subscriber.subscribe(this.channel).then(
      () => undefined,
      (error: unknown) => this.logError(error instanceof Error ? error : new Error(String(error))),
    );
  }

  /** Resolves once the SUBSCRIBE is confirmed (tests wait for it before publishing). */
  async ready(): Promise<void> {
    await this.subscribed;
  }

  private onMessage(channel: string, message: string): void {
    if (channel !== this.channel) return;
    let parsed: unknown;
    try {
      parsed = JSON.parse(message);
    } catch {
      this.logger.event('warn', { msg: 'live events: dropped a message that is not JSON' });
      return;
    }
    const result = LiveEvent.safeParse(parsed);
    if (!result.success) {
      this.logger.event('warn', { msg: 'live events: dropped a message that is not a LiveEvent', issue: result.error.issues[0]?.message });
      return;
    }
    this.seq += 1;
    this.subject.next({ seq: this.seq, event: result.data });
  }

  private logError(error: Error): void {
    const now = Date.now();
    if (now - this.lastErrorLogAt < 30_000) return;
    this.lastErrorLogAt = now;
    this.logger.event('warn', { msg: 'live events: Redis subscriber problem', error: error.message });
  }

  onApplicationShutdown(): void {
    this.subject.complete();
    this.subscriber.disconnect();
  }
}
