/**
 * Redis isolation for tests: one real Redis, a unique BullMQ prefix per test file (or per call).
 *
 *   const prefix = testQueuePrefix('ingest');        // e.g. 'ausline-test:1764626400_a1b2c3:ingest:9f8e7d6c'
 *   // pass it as QUEUE_PREFIX (testAppEnv) or as `prefix` to Queue/Worker/QueueEvents
 *   afterAll(() => deleteRedisKeys(prefix));          // optional tidy-up
 */
import { randomBytes } from 'node:crypto';
import { Redis } from 'ioredis';
import { inject } from 'vitest';
import { REDIS_TEST_PREFIX, TEST_REDIS_URL } from './env.js';
import { deleteRedisKeys } from './global-setup.js';

export { TEST_REDIS_URL } from './env.js';

/** A prefix no other test file or run uses. Keys of this run share `ausline-test:<runId>:`. */
export function testQueuePrefix(label = 'q'): string {
  const runId = inject('ausline_runId') || 'norun';
  const safeLabel = label.replace(/[^A-Za-z0-9_-]/g, '-');
  return `${REDIS_TEST_PREFIX}${runId}:${safeLabel}:${randomBytes(4).toString('hex')}`;
}

/** A Redis connection for tests; fails fast instead of retrying forever when Redis is gone. */
export function createTestRedis(): Redis {
  return new Redis(TEST_REDIS_URL, { maxRetriesPerRequest: 1, connectTimeout: 2_000, lazyConnect: false });
}

/** Deletes every key under `prefix` (SCAN, never KEYS). Returns how many were deleted. */
export { deleteRedisKeys };
