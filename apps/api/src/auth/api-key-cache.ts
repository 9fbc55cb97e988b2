import pg from 'pg';
import { JsonLogger } from '../http/logger.js';
import type { Principal } from './access.js';

/**
 * Remembers the principal of an API key that authenticated, so a controller posting every second does
 * not cost a database lookup per request (issue 7: the per-request fixed cost of ingest).
 *
 * Invalidation is pushed by the database: a trigger on "ApiKey" and "ApiKeyEquipment" (migration
 * 20261202009100_api_key_notify) sends NOTIFY ausline_api_keys on every change, whoever makes it (the
 * admin endpoints, a script, another api instance); every api instance LISTENs on a connection of its
 * own and forgets every cached key on a notification. Notifications arrive when the revoking
 * transaction commits, so a revoked key is refused from then on, as without the cache, save for the
 * milliseconds the notification takes to reach another instance (the instance that revoked forgets at
 * once, forgetCachedApiKeys).
 *
 * The cache is used only while the LISTEN connection is up: when it drops (Postgres restart, network),
 * everything cached is forgotten and every request looks its key up again until the connection is back
 * and listening, so a change made while nobody listened cannot be missed. A lookup that overlapped a
 * notification (or a reconnect) is not cached (generation counter). Entries also expire after
 * API_KEY_CACHE_TTL_MS whatever happens.
 */
export const API_KEY_CACHE_TTL_MS = 60_000;
/** At most this many keys are cached (a plant has tens to hundreds of controllers). */
const MAX_ENTRIES = 10_000;
export const API_KEY_NOTIFY_CHANNEL = 'ausline_api_keys';
const RECONNECT_MS = 1_000;

/** The caches of this process (one per api app; tests start several). */
const caches = new Set<ApiKeyCache>();

/**
 * Forgets every key cached in this process at once. A revoke through this process calls it after its
 * commit, so the next request on the revoked key is refused here without waiting for the notification.
 */
export function forgetCachedApiKeys(): void {
  for (const cache of caches) cache.forget();
}

export class ApiKeyCache {
  private readonly entries = new Map<string, { principal: Principal; expiresAt: number }>();
  private generation = 0;
  private listening = false;
  private client: pg.Client | undefined;
  private reconnectTimer: NodeJS.Timeout | undefined;
  private closed = false;
  private readonly logger: JsonLogger;

  constructor(
    private readonly databaseUrl: string,
    logLevel: ConstructorParameters<typeof JsonLogger>[0] = 'info',
  ) {
    this.logger = new JsonLogger(logLevel);
  }

  /** True while invalidations are being received (the cache is in use). */
  get active(): boolean {
    return this.listening;
  }

  /** Opens the LISTEN connection (retrying in the background when it cannot). Never throws. */
  async start(): Promise<void> {
    this.closed = false;
    caches.add(this);
    await this.connect();
  }

  async stop(): Promise<void> {
    this.closed = true;
    caches.delete(this);
    if (this.reconnectTimer) clearTimeout(this.reconnectTimer);
    this.reconnectTimer = undefined;
    this.forget();
    const client = this.client;
    this.client = undefined;
    await client?.end().catch(() => undefined);
  }

  /**
   * The cached principal for `cacheKey` (a digest of the presented key), or the one `lookup` finds,
   * cached when it is found and the cache is live throughout the lookup.
   */
  async get(cacheKey: string, lookup: () => Promise<Principal | undefined>): Promise<Principal | undefined> {
    if (this.listening) {
      const hit = this.entries.get(cacheKey);
      if (hit && hit.expiresAt > Date.now()) return hit.principal;
      if (hit) this.entries.delete(cacheKey);
    }
    const generation = this.generation;
    const wasListening = this.listening;
    const principal = await lookup();
    if (principal && wasListening && this.listening && generation === this.generation) {
      if (this.entries.size >= MAX_ENTRIES) this.entries.clear();
      this.entries.set(cacheKey, { principal, expiresAt: Date.now() + API_KEY_CACHE_TTL_MS });
    }
    return principal;
  }

  /** Forgets every cached key (a notification, a lost connection, a local revoke). */
  forget(): void {
    this.generation += 1;
    this.entries.clear();
  }

  private async connect(): Promise<void> {
    if (this.closed) return;
    const client = new pg.Client({ connectionString: this.databaseUrl, connectionTimeoutMillis: 5_000 });
    this.client = client;
    const lost = (error?: Error): void => {
      if (this.client !== client) return;
      this.listening = false;
      this.forget();
      this.client = undefined;
      client.end().catch(() => undefined);
      if (error && !this.closed) this.logger.event('warn', { msg: 'api key cache: LISTEN connection lost; keys are looked up every time until it is back', error: error.message });
      this.scheduleReconnect();
    };
    client.on('error', (error) => lost(error));
    client.on('end', () => lost());
    client.on('notification', () => this.forget());
    try {
      await client.connect();
      await client.query(`LISTEN ${API_KEY_NOTIFY_CHANNEL}`);
      if (this.client !== client) return;
      // Anything cached before this point might have missed a change: start empty.
      this.forget();
      this.listening = true;
    } catch (error) {
      lost(error instanceof Error ? error : new Error(String(error)));
    }
  }

  private scheduleReconnect(): void {
    if (this.closed || this.reconnectTimer) return;
    this.reconnectTimer = setTimeout(() => {
      this.reconnectTimer = undefined;
      void this.connect();
    }, RECONNECT_MS);
    this.reconnectTimer.unref();
  }
}
