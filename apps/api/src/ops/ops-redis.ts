import { Redis } from 'ioredis';

/**
 * The Redis connection the ops endpoints use (readiness PING, queue depth). It fails fast instead of
 * queueing commands while Redis is away, so /health/ready answers "down" at once rather than hang,
 * and it keeps reconnecting in the background with a capped backoff.
 */
export function createOpsRedis(url: string, onError: (error: Error) => void): Redis {
  const redis = new Redis(url, {
    lazyConnect: true,
    enableOfflineQueue: false,
    maxRetriesPerRequest: 1,
    connectTimeout: 2_000,
    retryStrategy: (attempt) => Math.min(200 * attempt, 2_000),
  });
  redis.on('error', onError);
  return redis;
}
