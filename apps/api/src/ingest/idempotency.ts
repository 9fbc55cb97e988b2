import { createHash } from 'node:crypto';
import {
  applyDecorators,
  createParamDecorator,
  Inject,
  Injectable,
  SetMetadata,
  UseInterceptors,
  type CallHandler,
  type ExecutionContext,
  type NestInterceptor,
  type OnApplicationShutdown,
} from '@nestjs/common';
import { Reflector } from '@nestjs/core';
import { ApiHeader } from '@nestjs/swagger';
import { from, mergeMap, type Observable, of } from 'rxjs';
import { catchError } from 'rxjs/operators';
import type { PrismaClient } from '@ausline/db';
import { API_CONFIG, type ApiConfig } from '../app-config.js';
import { PRINCIPAL_PROPERTY, type Principal } from '../auth/access.js';
import { ApiError, badRequest, conflict, pathOnly, toErrorBody, unprocessable } from '../http/errors.js';
import { ingestRequestsTotal } from '../ops/metrics.js';
import { InjectPrisma } from '../prisma.provider.js';
import type { IngestKind } from './ingest-metrics.js';
import { ingestSettingsFrom } from './ingest-settings.js';

/**
 * `Idempotency-Key` request header (IETF draft-ietf-httpapi-idempotency-key-header-07, work in
 * progress; summarised in practice.md §5.4). Our published rules:
 *
 * - The key is a Structured Field String (`"8e03978e-..."`); a bare token without quotes is accepted
 *   too. 8 to 255 printable ASCII characters; exactly one header per request.
 * - Keys are scoped to the caller (API key or user): two callers never see each other's replies.
 * - First request: processed normally. Its reply is stored when it is a success (2xx) or a 400 (the
 *   payload itself is malformed and can never succeed). Other errors (409, 422, 5xx) are not stored:
 *   they depend on the state of the plant data (e.g. a channel not configured yet), so a retry with the
 *   same key is processed afresh once that is fixed.
 * - Same key, same request (method, path and JSON body, key order ignored): the stored reply is
 *   returned again (header `Idempotent-Replayed: true`).
 * - Same key, different request: 422.
 * - Same key while the first request is still being processed: 409 (retry later). A first request that
 *   failed (a 5xx, e.g. Postgres went away half-way) releases its claim; when the release itself cannot
 *   reach Postgres, this process keeps retrying it in the background and lets the next attempt of the
 *   same key take the claim over at once, so a retry after an outage is processed as soon as Postgres
 *   is back (not after IN_FLIGHT_TAKEOVER_MS). A first request whose process died (crash) is taken over
 *   after IN_FLIGHT_TAKEOVER_MS; the writes behind it are idempotent on their own (samples by
 *   (channel, t)), so processing again is safe.
 * - Handlers marked @Idempotent(kind, { inTransaction: true }) (samples) claim the key inside their own
 *   write transaction (claimInTransaction / completeInTransaction below): the claim commits or rolls back
 *   with the writes, so it cannot outlive a failed attempt at all, and a concurrent attempt with the same
 *   key waits for the first to finish and then gets its reply.
 * - Keys expire after IDEMPOTENCY_TTL_H hours (default 24).
 */
export const IDEMPOTENCY_HEADER = 'Idempotency-Key';
const HEADER_LC = IDEMPOTENCY_HEADER.toLowerCase();
const HEADER_PATH = `headers.${IDEMPOTENCY_HEADER}`;
export const IN_FLIGHT_TAKEOVER_MS = 60_000;
const CLEANUP_INTERVAL_MS = 10 * 60_000;

/** Parses the header value; undefined when absent. Throws 400 naming the header when malformed. */
export function parseIdempotencyKey(value: string | string[] | undefined, rawHeaders: readonly string[] = []): string | undefined {
  let occurrences = 0;
  for (let i = 0; i < rawHeaders.length; i += 2) if (rawHeaders[i]!.toLowerCase() === HEADER_LC) occurrences += 1;
  if (occurrences > 1 || Array.isArray(value)) {
    throw badRequest(`Send one ${IDEMPOTENCY_HEADER} header, not ${Math.max(occurrences, 2)}`, [
      { path: HEADER_PATH, message: 'only one key per request' },
    ]);
  }
  if (value === undefined) return undefined;
  const text = value.trim();
  let key: string | undefined;
  if (text.startsWith('"')) {
    key = parseStructuredString(text);
  } else if (/^[\x21\x23-\x2b\x2d-\x7e]+$/.test(text)) {
    key = text;
  }
  if (key === undefined) {
    throw badRequest(`${IDEMPOTENCY_HEADER} must be a quoted string such as "8e03978e-40d5-43e8-bc93-6894a57f9324"`, [
      { path: HEADER_PATH, message: 'not a Structured Field String or token' },
    ]);
  }
  if (key.length < 8 || key.length > 255) {
    throw badRequest(`${IDEMPOTENCY_HEADER} must be 8 to 255 characters (use a random UUID)`, [
      { path: HEADER_PATH, message: `length ${key.length}, expected 8 to 255` },
    ]);
  }
  return key;
}

/** RFC 8941 sf-string: DQUOTE *( unescaped / "\" ( DQUOTE / "\" ) ) DQUOTE, printable ASCII only. */
function parseStructuredString(text: string): string | undefined {
  if (text.length < 2 || !text.endsWith('"')) return undefined;
  let out = '';
  for (let i = 1; i < text.length - 1; i++) {
    const ch = text[i]!;
    const code = ch.charCodeAt(0);
    if (code < 0x20 || code > 0x7e) return undefined;
    if (ch === '\\') {
      const next = text[i + 1];
      if (next !== '"' && next !== '\\') return undefined;
      if (i + 1 === text.length - 1) return undefined;
      out += next;
      i += 1;
      continue;
    }
    if (ch === '"') return undefined;
    out += ch;
  }
  return out;
}

/**
 * JSON with object keys sorted at every level, so key order does not change a request's identity.
 * (Undefined object members are left out, as JSON.stringify does; anything JSON cannot say is null.)
 * Built in one pass into one string, with the sorted key order of each object shape worked out once: a
 * 10,000-sample body is hashed on every request that carries a key.
 */
export function stableStringify(value: unknown): string {
  return appendStable('', value);
}

/** An object shape's keys in their own order, and in sorted order with each key already quoted. */
interface ShapePlan {
  own: string[];
  sorted: Array<{ key: string; quoted: string }>;
}
const shapePlans = new Map<string, ShapePlan>();
const MAX_SHAPES = 1_000;

let lastPlan: ShapePlan | undefined;

function sameKeys(plan: ShapePlan | undefined, keys: string[]): plan is ShapePlan {
  return plan !== undefined && plan.own.length === keys.length && plan.own.every((k, i) => k === keys[i]);
}

function planFor(keys: string[]): ShapePlan {
  // Bodies are mostly arrays of objects of one shape: try the last plan before building a signature.
  if (sameKeys(lastPlan, keys)) return lastPlan;
  lastPlan = planForSignature(keys);
  return lastPlan;
}

function planForSignature(keys: string[]): ShapePlan {
  const signature = keys.join(',');
  const known = shapePlans.get(signature);
  // The signature is ambiguous (keys may contain commas): a plan is used only for the very same keys.
  if (sameKeys(known, keys)) return known;
  const plan: ShapePlan = { own: keys, sorted: [...keys].sort().map((key) => ({ key, quoted: `${JSON.stringify(key)}:` })) };
  if (!known && shapePlans.size < MAX_SHAPES) shapePlans.set(signature, plan);
  return plan;
}

function appendStable(out: string, value: unknown): string {
  if (typeof value === 'number') return out + (Number.isFinite(value) ? String(value) : 'null');
  if (value === null || typeof value !== 'object') return out + (JSON.stringify(value) ?? 'null');
  if (Array.isArray(value)) {
    out += '[';
    for (let i = 0; i < value.length; i++) {
      if (i > 0) out += ',';
      out = appendStable(out, value[i]);
    }
    return out + ']';
  }
  const record = value as Record<string, unknown>;
  const { sorted } = planFor(Object.keys(record));
  out += '{';
  let first = true;
  for (const { key, quoted } of sorted) {
    const v = record[key];
    if (v === undefined) continue;
    if (!first) out += ',';
    first = false;
    out = appendStable(out + quoted, v);
  }
  return out + '}';
}

export function requestFingerprint(method: string, path: string, body: unknown): string {
  return createHash('sha256').update(`${method.toUpperCase()} ${path}\n${stableStringify(body ?? null)}`).digest('hex');
}

export function principalScope(principal: Principal): string {
  return principal.kind === 'user' ? `user:${principal.userId}` : `apikey:${principal.keyId}`;
}

export type IdempotencyBegin =
  | { kind: 'new'; id: string; claimedAt: Date }
  | { kind: 'replay'; status: number; body: unknown }
  | { kind: 'mismatch' }
  | { kind: 'in-flight' };

/** Who claims which key for which request: what a handler claiming in its own transaction is given. */
export interface IdempotencyClaim {
  principal: string;
  key: string;
  requestHash: string;
}

/** The part of a pg client (pg.PoolClient) the in-transaction claim needs. */
export interface PgQueryable {
  query<R extends object = Record<string, unknown>>(text: string, values?: unknown[]): Promise<{ rows: R[] }>;
}

/**
 * Thrown by a handler that claims in its own transaction when the key already has a stored reply: the
 * interceptor answers with that reply (header Idempotent-Replayed: true) instead of an error.
 */
export class IdempotentReplay extends Error {
  constructor(
    readonly status: number,
    readonly body: unknown,
  ) {
    super('idempotent replay');
    this.name = 'IdempotentReplay';
  }
}

/**
 * What to answer when a claim was not granted: throws the replay, the 422 (same key, another request)
 * or the 409 (still in flight); returns the claimed record when it was.
 */
export function claimedOrThrow(begun: IdempotencyBegin): { id: string; claimedAt: Date } {
  switch (begun.kind) {
    case 'new':
      return { id: begun.id, claimedAt: begun.claimedAt };
    case 'replay':
      throw new IdempotentReplay(begun.status, begun.body);
    case 'mismatch':
      throw unprocessable(`${IDEMPOTENCY_HEADER} was already used with a different request; use a new key for a new request`, [
        { path: HEADER_PATH, message: 'key reused with a different payload' },
      ]);
    case 'in-flight':
      throw conflict(`A request with this ${IDEMPOTENCY_HEADER} is still being processed; retry later`, [
        { path: HEADER_PATH, message: 'original request still in progress' },
      ]);
  }
}

interface ExistingRecord {
  id: string;
  requestHash: string;
  responseStatus: number | null;
  responseBody: unknown;
  createdAt: Date;
  expired: boolean;
  abandoned: boolean;
}

/** What an existing record means for a new attempt; 'expired' and 'abandoned' ask the caller to act. */
function judgeExisting(existing: ExistingRecord, requestHash: string): IdempotencyBegin | 'expired' | 'abandoned' {
  if (existing.expired) return 'expired';
  if (existing.requestHash !== requestHash) return { kind: 'mismatch' };
  if (existing.responseStatus !== null) return { kind: 'replay', status: existing.responseStatus, body: existing.responseBody };
  return existing.abandoned ? 'abandoned' : { kind: 'in-flight' };
}

/**
 * Claims the key inside the caller's open transaction (raw pg client). The claim row is written by the
 * transaction, so it commits with the request's writes (and its reply, completeInTransaction) or not at
 * all: a failed attempt leaves no claim behind. A concurrent attempt with the same key waits on the
 * unique index until this transaction ends, then sees its reply. Committed claims without a reply (an
 * attempt through the interceptor's own claim whose process died) are taken over after
 * IN_FLIGHT_TAKEOVER_MS, as in IdempotencyStore.begin.
 */
export async function claimInTransaction(db: PgQueryable, claim: IdempotencyClaim, ttlMs: number): Promise<IdempotencyBegin> {
  for (let attempt = 0; attempt < 3; attempt++) {
    const inserted = await db.query<{ id: string; createdAt: Date }>(
      `INSERT INTO "IdempotencyRecord" ("principal", "key", "requestHash", "expiresAt")
       VALUES ($1, $2, $3, now() + $4 * interval '1 millisecond')
       ON CONFLICT ("principal", "key") DO NOTHING
       RETURNING "id", "createdAt"`,
      [claim.principal, claim.key, claim.requestHash, ttlMs],
    );
    if (inserted.rows[0]) return { kind: 'new', id: inserted.rows[0].id, claimedAt: inserted.rows[0].createdAt };
    const { rows } = await db.query<ExistingRecord>(
      `SELECT "id", "requestHash", "responseStatus", "responseBody", "createdAt",
              "expiresAt" < now() AS "expired",
              "createdAt" < now() - $3 * interval '1 millisecond' AS "abandoned"
       FROM "IdempotencyRecord" WHERE "principal" = $1 AND "key" = $2
       FOR UPDATE`,
      [claim.principal, claim.key, IN_FLIGHT_TAKEOVER_MS],
    );
    const existing = rows[0];
    if (!existing) continue; // deleted meanwhile: claim it again
    const judged = judgeExisting(existing, claim.requestHash);
    if (judged === 'expired') {
      await db.query(`DELETE FROM "IdempotencyRecord" WHERE "id" = $1::uuid`, [existing.id]);
      continue;
    }
    if (judged === 'abandoned') {
      // The row is locked by this transaction (FOR UPDATE): take it over.
      const taken = await db.query<{ createdAt: Date }>(`UPDATE "IdempotencyRecord" SET "createdAt" = now() WHERE "id" = $1::uuid RETURNING "createdAt"`, [
        existing.id,
      ]);
      return { kind: 'new', id: existing.id, claimedAt: taken.rows[0]!.createdAt };
    }
    return judged;
  }
  return { kind: 'in-flight' };
}

/** Stores the reply of a claim made by claimInTransaction, in the same transaction. */
export async function completeInTransaction(db: PgQueryable, id: string, status: number, body: unknown): Promise<void> {
  await db.query(`UPDATE "IdempotencyRecord" SET "responseStatus" = $2, "responseBody" = $3::jsonb WHERE "id" = $1::uuid`, [
    id,
    status,
    JSON.stringify(body ?? null),
  ]);
}

/** How often a claim whose release failed (Postgres away) is tried again, and for how long. */
const RELEASE_RETRY_MS = 1_000;

@Injectable()
export class IdempotencyStore implements OnApplicationShutdown {
  private readonly ttlMs: number;
  private lastCleanupAt = 0;
  /**
   * Claims of this process whose attempt failed but whose release did not reach Postgres: id → the
   * claim's createdAt. The next attempt of the same key takes such a claim over at once (no request
   * is working under it any more), and a timer keeps trying to release it meanwhile.
   */
  private readonly failedClaims = new Map<string, Date>();
  private releaseTimer: NodeJS.Timeout | undefined;

  constructor(
    @InjectPrisma() private readonly prisma: PrismaClient,
    @Inject(API_CONFIG) config: ApiConfig,
  ) {
    this.ttlMs = ingestSettingsFrom(config).idempotencyTtlMs;
  }

  get idempotencyTtlMs(): number {
    return this.ttlMs;
  }

  /** Claims the key for this request, or says what to answer instead. */
  async begin(principal: string, key: string, requestHash: string): Promise<IdempotencyBegin> {
    this.cleanupSometimes();
    for (let attempt = 0; attempt < 3; attempt++) {
      const inserted = await this.prisma.$queryRaw<Array<{ id: string; createdAt: Date }>>`
        INSERT INTO "IdempotencyRecord" ("principal", "key", "requestHash", "expiresAt")
        VALUES (${principal}, ${key}, ${requestHash}, now() + ${this.ttlMs} * interval '1 millisecond')
        ON CONFLICT ("principal", "key") DO NOTHING
        RETURNING "id", "createdAt"`;
      if (inserted[0]) return { kind: 'new', id: inserted[0].id, claimedAt: inserted[0].createdAt };

      const rows = await this.prisma.$queryRaw<ExistingRecord[]>`
        SELECT "id", "requestHash", "responseStatus", "responseBody", "createdAt",
               "expiresAt" < now() AS "expired",
               "createdAt" < now() - ${IN_FLIGHT_TAKEOVER_MS} * interval '1 millisecond' AS "abandoned"
        FROM "IdempotencyRecord" WHERE "principal" = ${principal} AND "key" = ${key}`;
      const existing = rows[0];
      if (!existing) continue; // deleted between the two statements: try to claim it again
      let judged = judgeExisting(existing, requestHash);
      if (judged === 'expired') {
        await this.prisma.$executeRaw`DELETE FROM "IdempotencyRecord" WHERE "id" = ${existing.id}::uuid AND "expiresAt" < now()`;
        continue;
      }
      const ownFailed = this.failedClaims.get(existing.id);
      if (judged !== 'abandoned' && judged.kind === 'in-flight' && ownFailed?.getTime() === existing.createdAt.getTime()) judged = 'abandoned';
      if (judged === 'abandoned') {
        // Either the claim is older than IN_FLIGHT_TAKEOVER_MS (its process died), or it is one of this
        // process's own failed attempts: take it over unless someone else did first (createdAt moves).
        const taken = await this.prisma.$queryRaw<Array<{ createdAt: Date }>>`
          UPDATE "IdempotencyRecord" SET "createdAt" = now()
          WHERE "id" = ${existing.id}::uuid AND "responseStatus" IS NULL AND "createdAt" = ${existing.createdAt}
          RETURNING "createdAt"`;
        if (taken[0]) {
          this.failedClaims.delete(existing.id);
          return { kind: 'new', id: existing.id, claimedAt: taken[0].createdAt };
        }
        continue;
      }
      return judged;
    }
    return { kind: 'in-flight' };
  }

  async complete(id: string, status: number, body: unknown): Promise<void> {
    await this.prisma.$executeRaw`
      UPDATE "IdempotencyRecord" SET "responseStatus" = ${status}, "responseBody" = ${JSON.stringify(body ?? null)}::jsonb
      WHERE "id" = ${id}::uuid`;
  }

  /** Releases the key: the outcome is not one to replay. */
  async release(id: string): Promise<void> {
    await this.prisma.$executeRaw`DELETE FROM "IdempotencyRecord" WHERE "id" = ${id}::uuid`;
  }

  /**
   * The attempt under this claim failed and its outcome is not stored: release the claim. When Postgres
   * cannot be reached (the usual reason for the failure), remember the claim so that the next attempt
   * takes it over at once, and keep trying to release it in the background. Never throws.
   */
  async abandon(id: string, claimedAt: Date): Promise<void> {
    try {
      await this.releaseIfUnchanged(id, claimedAt);
    } catch {
      this.failedClaims.set(id, claimedAt);
      this.scheduleReleases();
    }
  }

  private async releaseIfUnchanged(id: string, claimedAt: Date): Promise<void> {
    // Only while nobody has taken the claim over (createdAt moves) or completed it.
    await this.prisma.$executeRaw`
      DELETE FROM "IdempotencyRecord" WHERE "id" = ${id}::uuid AND "createdAt" = ${claimedAt} AND "responseStatus" IS NULL`;
  }

  private scheduleReleases(): void {
    if (this.releaseTimer) return;
    this.releaseTimer = setTimeout(() => {
      this.releaseTimer = undefined;
      void this.retryReleases();
    }, RELEASE_RETRY_MS);
    this.releaseTimer.unref();
  }

  private async retryReleases(): Promise<void> {
    for (const [id, claimedAt] of [...this.failedClaims]) {
      // Past the takeover age any attempt takes the claim over anyway: stop trying.
      if (Date.now() - claimedAt.getTime() > IN_FLIGHT_TAKEOVER_MS) {
        this.failedClaims.delete(id);
        continue;
      }
      try {
        await this.releaseIfUnchanged(id, claimedAt);
        if (this.failedClaims.get(id) === claimedAt) this.failedClaims.delete(id);
      } catch {
        break; // still unreachable: try again later
      }
    }
    if (this.failedClaims.size > 0) this.scheduleReleases();
  }

  onApplicationShutdown(): void {
    if (this.releaseTimer) clearTimeout(this.releaseTimer);
    this.releaseTimer = undefined;
  }

  private cleanupSometimes(): void {
    const now = Date.now();
    if (now - this.lastCleanupAt < CLEANUP_INTERVAL_MS) return;
    this.lastCleanupAt = now;
    void this.prisma.$executeRaw`DELETE FROM "IdempotencyRecord" WHERE "expiresAt" < now()`.catch(() => undefined);
  }
}

interface HttpRequestLike {
  method: string;
  originalUrl?: string;
  url: string;
  headers: Record<string, string | string[] | undefined>;
  rawHeaders?: string[];
  body?: unknown;
  [PRINCIPAL_PROPERTY]?: Principal;
  [CLAIM_PROPERTY]?: IdempotencyClaim;
}

interface HttpResponseLike {
  statusCode: number;
  status(code: number): unknown;
  setHeader(name: string, value: string): unknown;
}

/** Which replies are stored for replay (see the rules above). */
function isReplayable(status: number): boolean {
  return (status >= 200 && status < 300) || status === 400;
}

const INGEST_KIND_METADATA = 'ausline:ingest-kind';
const IN_TRANSACTION_METADATA = 'ausline:idempotency-in-transaction';
/** The request property where a handler that claims in its own transaction finds its claim. */
const CLAIM_PROPERTY = 'idempotencyClaim';

/** `@IdempotencyClaimParam() claim` — the claim for a handler marked { inTransaction: true }, or undefined without a key. */
export const IdempotencyClaimParam = createParamDecorator(
  (_data: unknown, ctx: ExecutionContext): IdempotencyClaim | undefined => ctx.switchToHttp().getRequest<HttpRequestLike>()[CLAIM_PROPERTY],
);

@Injectable()
export class IdempotencyInterceptor implements NestInterceptor {
  constructor(
    private readonly store: IdempotencyStore,
    private readonly reflector: Reflector,
  ) {}

  async intercept(context: ExecutionContext, next: CallHandler): Promise<Observable<unknown>> {
    const http = context.switchToHttp();
    const request = http.getRequest<HttpRequestLike>();
    const response = http.getResponse<HttpResponseLike>();
    const key = parseIdempotencyKey(request.headers[HEADER_LC], request.rawHeaders ?? []);
    const principal = request[PRINCIPAL_PROPERTY];
    if (key === undefined || principal === undefined) return next.handle();

    const fingerprint = requestFingerprint(request.method, pathOnly(request.originalUrl ?? request.url), request.body);
    const scope = principalScope(principal);
    if (this.reflector.get<boolean | undefined>(IN_TRANSACTION_METADATA, context.getHandler())) {
      // The handler claims in its own transaction; here only the replies it cannot store itself: a
      // replay it found, and a 400 thrown before its transaction (the payload can never succeed).
      request[CLAIM_PROPERTY] = { principal: scope, key, requestHash: fingerprint };
      return next.handle().pipe(
        catchError((error: unknown) =>
          from(
            (async () => {
              if (error instanceof IdempotentReplay) return this.replay(context, response, error);
              const { body } = toErrorBody(error);
              if (body.statusCode === 400) {
                let claimed: { id: string; claimedAt: Date };
                try {
                  claimed = claimedOrThrow(await this.store.begin(scope, key, fingerprint));
                } catch (answer) {
                  if (answer instanceof IdempotentReplay) return this.replay(context, response, answer);
                  throw answer;
                }
                await this.store.complete(claimed.id, 400, body);
              }
              throw error;
            })(),
          ),
        ),
      );
    }

    let claimed: { id: string; claimedAt: Date };
    try {
      claimed = claimedOrThrow(await this.store.begin(scope, key, fingerprint));
    } catch (answer) {
      if (answer instanceof IdempotentReplay) return of(this.replay(context, response, answer));
      throw answer;
    }
    return next.handle().pipe(
      // (When the reply cannot be stored, the error goes to catchError below as a 500: the claim is
      // abandoned, so a retry runs again.)
      mergeMap(async (body: unknown) => {
        await this.store.complete(claimed.id, response.statusCode, body);
        return body;
      }),
      catchError((error: unknown) =>
        from(
          (async () => {
            const { body } = toErrorBody(error);
            if (isReplayable(body.statusCode)) {
              try {
                await this.store.complete(claimed.id, body.statusCode, body);
              } catch {
                await this.store.abandon(claimed.id, claimed.claimedAt);
              }
            } else {
              await this.store.abandon(claimed.id, claimed.claimedAt);
            }
            throw error;
          })(),
        ),
      ),
    );
  }

  /** Answers with a stored reply (a stored error is thrown again as it was). */
  private replay(context: ExecutionContext, response: HttpResponseLike, replay: IdempotentReplay): unknown {
    const kind = this.reflector.get<IngestKind | undefined>(INGEST_KIND_METADATA, context.getHandler());
    if (kind) ingestRequestsTotal.inc({ kind, outcome: 'duplicate' });
    response.setHeader('Idempotent-Replayed', 'true');
    if (replay.status >= 400) {
      const stored = (replay.body ?? {}) as { message?: string; issues?: Array<{ path: string; message: string }> };
      throw new ApiError(replay.status, stored.message ?? 'Replayed error', stored.issues ?? []);
    }
    response.status(replay.status);
    return replay.body;
  }
}

/** Marks a JSON POST handler as honouring the Idempotency-Key header (and documents it). */
export function Idempotent(kind: IngestKind, options: { inTransaction?: boolean } = {}): MethodDecorator {
  return applyDecorators(
    SetMetadata(INGEST_KIND_METADATA, kind),
    SetMetadata(IN_TRANSACTION_METADATA, options.inTransaction === true),
    UseInterceptors(IdempotencyInterceptor),
    ApiHeader({
      name: IDEMPOTENCY_HEADER,
      required: false,
      description:
        'Optional. A unique key per request (Structured Field String, e.g. "8e03978e-40d5-43e8-bc93-6894a57f9324"; 8-255 chars). ' +
        'A retry with the same key and body gets the stored reply (header Idempotent-Replayed: true); the same key with a different ' +
        'body gets 422; while the first is still running, 409. Successes and 400s are stored for IDEMPOTENCY_TTL_H hours (default 24); ' +
        '409/422/5xx are not stored, so a retry is processed again.',
    }),
  );
}
