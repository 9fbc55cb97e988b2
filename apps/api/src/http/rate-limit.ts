import { createHash } from 'node:crypto';
import type { IncomingMessage, ServerResponse } from 'node:http';
import type { AppConfig } from '@ausline/contracts';
import { ApiError } from './errors.js';

/**
 * Rate limits of the API, in memory of one process (one API instance per plant; behind several
 * instances each enforces its own share):
 *
 *   - per client address: every request except the health and metrics probes;
 *   - per API key: requests that carry a key (Authorization: ApiKey … or X-Api-Key), keyed by a hash
 *     of the whole key, before it is checked, so a stranger who knows a key's public prefix cannot
 *     drain that controller's allowance (a wrong secret is a different bucket);
 *   - sign-in: failed attempts per account (the e-mail as typed, normalised, whether or not it
 *     exists) and per address; a successful sign-in gives its token back.
 *
 * Token buckets: `burst` requests at once, refilled at `perS` per second. Over the limit the answer
 * is 429 in the API's error shape with Retry-After (whole seconds until one request is allowed).
 * Controllers (apps/line-sim) honour Retry-After and keep their outbox, so nothing is lost.
 *
 * Settings come from the API config (libs/contracts loadConfig: RATE_LIMIT_* and LOGIN_* variables,
 * checked at start with the rest of the configuration, listed in the README); 0 switches a limit off.
 * The client address is the TCP peer: behind a reverse proxy every client shares the proxy's address,
 * so raise or switch off the per-address limit there and rely on the per-key and per-account limits.
 */

type RateLimitConfig = Pick<
  AppConfig,
  | 'RATE_LIMIT_IP_PER_S'
  | 'RATE_LIMIT_IP_BURST'
  | 'RATE_LIMIT_KEY_PER_S'
  | 'RATE_LIMIT_KEY_BURST'
  | 'LOGIN_MAX_FAILURES_PER_ACCOUNT'
  | 'LOGIN_MAX_FAILURES_PER_IP'
  | 'LOGIN_FAILURE_WINDOW_MIN'
>;

export interface RateLimitSettings {
  /** Requests per second per client address (0 = no limit) and the burst above it. */
  ipPerS: number;
  ipBurst: number;
  /** Requests per second per API key (0 = no limit) and the burst above it. */
  keyPerS: number;
  keyBurst: number;
  /** Failed sign-ins allowed per account and per address within loginWindowMin (0 = no limit). */
  loginFailuresPerAccount: number;
  loginFailuresPerIp: number;
  loginWindowMin: number;
}

/** The settings from the loaded configuration (validated there: whole numbers, the window at least 1 min). */
export function rateLimitSettingsFrom(config: RateLimitConfig): RateLimitSettings {
  return {
    ipPerS: config.RATE_LIMIT_IP_PER_S,
    ipBurst: config.RATE_LIMIT_IP_BURST,
    keyPerS: config.RATE_LIMIT_KEY_PER_S,
    keyBurst: config.RATE_LIMIT_KEY_BURST,
    loginFailuresPerAccount: config.LOGIN_MAX_FAILURES_PER_ACCOUNT,
    loginFailuresPerIp: config.LOGIN_MAX_FAILURES_PER_IP,
    loginWindowMin: config.LOGIN_FAILURE_WINDOW_MIN,
  };
}

/** Token buckets by key; idle full buckets are forgotten so memory stays bounded. */
export class TokenBuckets {
  private readonly buckets = new Map<string, { tokens: number; atMs: number }>();

  constructor(
    readonly capacity: number,
    /** Tokens added per millisecond. */
    readonly refillPerMs: number,
    private readonly maxKeys = 100_000,
    private readonly now: () => number = Date.now,
  ) {}

  /** Takes one token; when none is left, how many whole seconds until one is. */
  take(key: string): { ok: true } | { ok: false; retryAfterS: number } {
    const bucket = this.current(key);
    if (bucket.tokens >= 1) {
      bucket.tokens -= 1;
      return { ok: true };
    }
    return { ok: false, retryAfterS: Math.max(1, Math.ceil((1 - bucket.tokens) / this.refillPerMs / 1000 - 1e-6)) };
  }

  /** Gives one token back (a request that, in the end, did not count). */
  refund(key: string): void {
    const bucket = this.buckets.get(key);
    if (bucket) bucket.tokens = Math.min(this.capacity, bucket.tokens + 1);
  }

  /** Fills the bucket (forgets the key). */
  reset(key: string): void {
    this.buckets.delete(key);
  }

  /** Tokens left now (capacity for an unknown key). */
  remaining(key: string): number {
    return this.buckets.has(key) ? this.current(key).tokens : this.capacity;
  }

  get size(): number {
    return this.buckets.size;
  }

  private current(key: string): { tokens: number; atMs: number } {
    const nowMs = this.now();
    let bucket = this.buckets.get(key);
    if (!bucket) {
      if (this.buckets.size >= this.maxKeys) this.prune(nowMs);
      bucket = { tokens: this.capacity, atMs: nowMs };
      this.buckets.set(key, bucket);
      return bucket;
    }
    bucket.tokens = Math.min(this.capacity, bucket.tokens + Math.max(0, nowMs - bucket.atMs) * this.refillPerMs);
    bucket.atMs = nowMs;
    return bucket;
  }

  /** Drops buckets that have refilled (indistinguishable from new ones); if none has, the oldest half. */
  private prune(nowMs: number): void {
    for (const [key, bucket] of this.buckets) {
      if (bucket.tokens + (nowMs - bucket.atMs) * this.refillPerMs >= this.capacity) this.buckets.delete(key);
    }
    if (this.buckets.size >= this.maxKeys) {
      let drop = Math.ceil(this.buckets.size / 2);
      for (const key of this.buckets.keys()) {
        if (drop-- <= 0) break;
        this.buckets.delete(key);
      }
    }
  }
}

function perSecond(perS: number, burst: number): TokenBuckets | undefined {
  return perS > 0 ? new TokenBuckets(Math.max(1, burst, perS), perS / 1000) : undefined;
}

/** Probes that orchestrators call often; never limited. */
const UNLIMITED_PATHS = ['/health/live', '/health/ready', '/metrics'];

type Next = (error?: unknown) => void;

export function clientAddress(req: IncomingMessage): string {
  return req.socket.remoteAddress ?? 'unknown';
}

/** The API key a request carries (not yet checked), or undefined. */
export function presentedApiKey(req: IncomingMessage): string | undefined {
  const xApiKey = req.headers['x-api-key'];
  if (typeof xApiKey === 'string' && xApiKey.trim() !== '') return xApiKey.trim();
  const authorization = req.headers.authorization;
  const match = typeof authorization === 'string' ? /^\s*apikey\s+(\S+)\s*$/i.exec(authorization) : null;
  return match?.[1];
}

function tooMany(res: ServerResponse, retryAfterS: number, message: string): ApiError {
  res.setHeader('Retry-After', String(retryAfterS));
  return new ApiError(429, `${message}; retry after ${retryAfterS} s`);
}

/** Express middleware: per-address and per-key request limits (see the module comment). */
export function requestRateLimitMiddleware(settings: RateLimitSettings) {
  const byIp = perSecond(settings.ipPerS, settings.ipBurst);
  const byKey = perSecond(settings.keyPerS, settings.keyBurst);
  return (req: IncomingMessage, res: ServerResponse, next: Next): void => {
    const path = (req.url ?? '').split('?')[0]!;
    if (UNLIMITED_PATHS.includes(path)) return next();
    if (byIp) {
      const taken = byIp.take(clientAddress(req));
      if (!taken.ok) return next(tooMany(res, taken.retryAfterS, `Too many requests from this address (at most ${settings.ipPerS} per second)`));
    }
    const key = byKey ? presentedApiKey(req) : undefined;
    if (byKey && key !== undefined) {
      const taken = byKey.take(createHash('sha256').update(key).digest('hex'));
      if (!taken.ok) return next(tooMany(res, taken.retryAfterS, `Too many requests with this API key (at most ${settings.keyPerS} per second)`));
    }
    next();
  };
}

export const LOGIN_PATH = '/v1/auth/login';

/**
 * Express middleware for POST /v1/auth/login, after the body parser: each attempt takes a token from
 * the account's and the address's bucket before the password is checked (so parallel guesses count
 * too); when the reply is anything but 401 (signed in, or a malformed request) the tokens go back,
 * and a successful sign-in refills the account. Normalises the e-mail as the sign-in does.
 */
export function loginThrottleMiddleware(settings: RateLimitSettings) {
  const windowMs = settings.loginWindowMin * 60_000;
  const byAccount = settings.loginFailuresPerAccount > 0 ? new TokenBuckets(settings.loginFailuresPerAccount, settings.loginFailuresPerAccount / windowMs) : undefined;
  const byIp = settings.loginFailuresPerIp > 0 ? new TokenBuckets(settings.loginFailuresPerIp, settings.loginFailuresPerIp / windowMs) : undefined;
  return (req: IncomingMessage, res: ServerResponse, next: Next): void => {
    if (req.method !== 'POST' || (req.url ?? '').split('?')[0] !== LOGIN_PATH) return next();
    const email = (req as IncomingMessage & { body?: { email?: unknown } }).body?.email;
    const account = typeof email === 'string' && email.length <= 320 ? `account:${email.trim().toLowerCase()}` : undefined;
    const ip = clientAddress(req);

    const ipTaken = byIp?.take(ip);
    if (ipTaken && !ipTaken.ok) return next(tooMany(res, ipTaken.retryAfterS, 'Too many failed sign-in attempts from this address'));
    const accountTaken = account !== undefined ? byAccount?.take(account) : undefined;
    if (accountTaken && !accountTaken.ok) {
      if (ipTaken) byIp!.refund(ip);
      return next(tooMany(res, accountTaken.retryAfterS, 'Too many failed sign-in attempts for this account'));
    }
    res.on('finish', () => {
      if (res.statusCode === 401) return;
      if (ipTaken) byIp!.refund(ip);
      if (account !== undefined && accountTaken) {
        if (res.statusCode === 200) byAccount!.reset(account);
        else byAccount!.refund(account);
      }
    });
    next();
  };
}
