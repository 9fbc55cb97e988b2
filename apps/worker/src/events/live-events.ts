import { Inject, Injectable, type OnApplicationShutdown } from '@nestjs/common';
import { Redis } from 'ioredis';
import type { AppConfig, LiveEvent } from '@ausline/contracts';
import { WorkerLogger, errorMessage } from '../logger.js';
import { WORKER_CONFIG } from '../worker-config.js';

/** The Redis pub/sub channel of live events for a queue prefix (API-CONTRACTS.md "Events"); equals
 *  EVENTS_CHANNEL ('ausline:events') for the default prefix. */
export function liveEventsChannel(queuePrefix: string): string {
  return `${queuePrefix}:events`;
}

/**
 * Publishes LiveEvent JSON on Redis after the recompute's transaction has committed; every api instance
 * relays them over SSE. Best effort: Postgres already holds the truth, so a failed publish is logged and
 * the job still succeeds (a dashboard catches up on its next snapshot).
 */
@Injectable()
export class LiveEventsPublisher implements OnApplicationShutdown {
  private readonly redis: Redis;
  readonly channel: string;

  constructor(
    @Inject(WORKER_CONFIG) config: AppConfig,
    private readonly logger: WorkerLogger,
  ) {
    this.channel = liveEventsChannel(config.QUEUE_PREFIX);
    this.redis = new Redis(config.REDIS_URL, { maxRetriesPerRequest: 1 });
    this.redis.on('error', () => undefined); // reported per publish below; ioredis reconnects by itself
  }

  async publish(events: readonly LiveEvent[]): Promise<number> {
    let sent = 0;
    for (const event of events) {
      try {
        await this.redis.publish(this.channel, JSON.stringify(event));
        sent++;
      } catch (error) {
        this.logger.event('warn', { msg: 'live event not published', type: event.type, error: errorMessage(error) });
      }
    }
    return sent;
  }

  async onApplicationShutdown(): Promise<void> {
    await this.redis.quit().catch(() => this.redis.disconnect());
  }
}
