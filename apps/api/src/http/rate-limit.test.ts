import { describe, expect, it } from 'vitest';
import { loadConfig } from '@ausline/contracts';
import { rateLimitSettingsFrom, TokenBuckets } from './rate-limit.js';

const minimal = { DATABASE_URL: 'postgresql://postgres@127.0.0.1:5432/ausline', REDIS_URL: 'redis://127.0.0.1:6379' };

describe('TokenBuckets', () => {
  it('allows the burst at once, then one token per 1/rate seconds, and says how long to wait', () => {
    let nowMs = 1_000_000;
    const buckets = new TokenBuckets(3, 2 / 1000, 100, () => nowMs); // burst 3, 2 per second
    expect([buckets.take('a').ok, buckets.take('a').ok, buckets.take('a').ok]).toEqual([true, true, true]);
    expect(buckets.take('a')).toEqual({ ok: false, retryAfterS: 1 });
    // Other keys are independent.
    expect(buckets.take('b').ok).toBe(true);
    nowMs += 499;
    expect(buckets.take('a').ok).toBe(false);
    nowMs += 1;
    expect(buckets.take('a').ok).toBe(true);
    // Never more than the burst, however long the pause.
    nowMs += 3_600_000;
    expect(buckets.remaining('a')).toBe(3);
  });

  it('Retry-After rounds up to whole seconds for slow refills', () => {
    let nowMs = 0;
    const buckets = new TokenBuckets(2, 2 / (15 * 60_000), 100, () => nowMs); // 2 per 15 min
    buckets.take('x');
    buckets.take('x');
    expect(buckets.take('x')).toEqual({ ok: false, retryAfterS: 450 });
    nowMs += 449_000;
    expect(buckets.take('x')).toEqual({ ok: false, retryAfterS: 1 });
  });

  it('refund gives a token back (never above the burst); reset refills', () => {
    const buckets = new TokenBuckets(2, 1e-9, 100, () => 0);
    buckets.take('k');
    buckets.take('k');
    buckets.refund('k');
    expect(buckets.remaining('k')).toBe(1);
    buckets.refund('k');
    buckets.refund('k');
    expect(buckets.remaining('k')).toBe(2);
    buckets.take('k');
    buckets.reset('k');
    expect(buckets.remaining('k')).toBe(2);
  });

  it('keeps at most maxKeys buckets: refilled ones go first, then the oldest half', () => {
    let nowMs = 0;
    const buckets = new TokenBuckets(1, 1 / 1000, 4, () => nowMs);
    for (const k of ['a', 'b', 'c', 'd']) buckets.take(k);
    nowMs += 10; // none refilled yet: the oldest half goes
    buckets.take('e');
    expect(buckets.size).toBe(3);
    expect(buckets.remaining('c')).toBeLessThan(1);
    buckets.take('f');
    nowMs += 10_000; // all refilled: all go
    buckets.take('g');
    expect(buckets.size).toBe(1);
  });
});

describe('rateLimitSettingsFrom', () => {
  it('takes the settings loadConfig read (defaults where unset, 0 = off)', () => {
    const settings = rateLimitSettingsFrom(loadConfig({ ...minimal, RATE_LIMIT_KEY_PER_S: '7', RATE_LIMIT_IP_PER_S: '0', LOGIN_MAX_FAILURES_PER_ACCOUNT: ' 3 ' }));
    expect(settings).toEqual({ ipPerS: 0, ipBurst: 400, keyPerS: 7, keyBurst: 200, loginFailuresPerAccount: 3, loginFailuresPerIp: 50, loginWindowMin: 15 });
  });

  it('bad values stop the start with an error naming every bad variable', () => {
    expect(() => loadConfig({ ...minimal, RATE_LIMIT_IP_PER_S: '-1', RATE_LIMIT_KEY_BURST: 'lots', LOGIN_FAILURE_WINDOW_MIN: '0' })).toThrow(
      /RATE_LIMIT_IP_PER_S: must be at least 0, got "-1"[\s\S]*RATE_LIMIT_KEY_BURST: must be a whole number, got "lots"[\s\S]*LOGIN_FAILURE_WINDOW_MIN: must be at least 1, got "0"/,
    );
  });
});
