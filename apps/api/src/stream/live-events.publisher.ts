import { Inject, Injectable, Optional, type OnApplicationShutdown } from '@nestjs/common';
import { Redis } from 'ioredis';
import type { LiveEvent } from '@ausline/contracts';
import { API_CONFIG, type ApiConfig } from '../app-config.js';
import { JsonLogger } from '../http/logger.js';
import { liveEventsChannel } from './channel.js';

/**
 * Publishes live events from the API itself (a person acknowledged or dispositioned a deviation), on
 * the same channel the worker uses, so every API instance relays them. Best effort: a change is
 * already committed when this runs, and dashboards re-read the lists on reconnect.
 */
@Injectable()
export class LiveEventsPublisher implements OnApplicationShutdown {
  private readonly redis: Redis;
  private readonly channel: string;
  private readonly logger: JsonLogger;
  private lastErrorLogAt = 0;

  constructor(@Inject(API_CONFIG) config: ApiConfig, @Optional() logger?: JsonLogger) {
    this.logger = logger ?? new JsonLogger(config.LOG_LEVEL);
    this.channel = liveEventsChannel(config.QUEUE_PREFIX);
    this.redis = new Redis(config.REDIS_URL, {
      lazyConnect: true,
      enableOfflineQueue: false,
      maxRetriesPerRequest: 1,
      connectTimeout: 2_000,
      retryStrategy: (attempt) => Math.min(attempt * 250, 5_000),
    });
    this.redis.on('error', (error) => this.logError(error));
    this.redis.connect().catch(() => undefined);
  }

  async publish(event: LiveEvent): Promise<void> {
    try {
      await this.redis.publish(this.channel, JSON.stringify(event));
    } catch (error) {
      this.logError(error instanceof Error ? error : new Error(String(error)));
    }
  }

  private logError(error: Error): void {
    const now = Date.now();
    if (now - this.lastErrorLogAt < 30_000) return;
    this.lastErrorLogAt = now;
    this.logger.event('warn', { msg: 'live events: could not publish', error: error.message });
  }

  onApplicationShutdown(): void {
    this.redis.disconnect();
  }
}
