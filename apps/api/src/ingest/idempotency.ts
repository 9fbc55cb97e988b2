import { createHash } from 'node:crypto';
import {
  applyDecorators,
  Inject,
  Injectable,
  SetMetadata,
  UseInterceptors,
  type CallHandler,
  type ExecutionContext,
  type NestInterceptor,
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
 *   died half-way (crash) is taken over after IN_FLIGHT_TAKEOVER_MS; the writes behind it are
 *   idempotent on their own (samples by (channel, t)), so processing again is safe.
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

/** JSON with object keys sorted at every level, so key order does not change a request's identity. */
export function stableStringify(value: unknown): string {
  if (value === null || typeof value !== 'object') return JSON.stringify(value) ?? 'null';
  if (Array.isArray(value)) return `[${value.map(stableStringify).join(',')}]`;
  const entries = Object.keys(value as Record<string, unknown>)
    .sort()
    .filter((k) => (value as Record<string, unknown>)[k] !== undefined)
    .map((k) => `${JSON.stringify(k)}:${stableStringify((value as Record<string, unknown>)[k])}`);
  return `{${entries.join(',')}}`;
}

export function requestFingerprint(method: string, path: string, body: unknown): string {
  return createHash('sha256').update(`${method.toUpperCase()} ${path}\n${stableStringify(body ?? null)}`).digest('hex');
}

export function principalScope(principal: Principal): string {
  return principal.kind === 'user' ? `user:${principal.userId}` : `apikey:${principal.keyId}`;
}

export type IdempotencyBegin =
  | { kind: 'new'; id: string }
  | { kind: 'replay'; status: number; body: unknown }
  | { kind: 'mismatch' }
  | { kind: 'in-flight' };

@Injectable()
export class IdempotencyStore {
  private readonly ttlMs: number;
  private lastCleanupAt = 0;

  constructor(
    @InjectPrisma() private readonly prisma: PrismaClient,
    @Inject(API_CONFIG) config: ApiConfig,
  ) {
    this.ttlMs = ingestSettingsFrom(config).idempotencyTtlMs;
  }

  /** Claims the key for this request, or says what to answer instead. */
  async begin(principal: string, key: string, requestHash: string): Promise<IdempotencyBegin> {
    this.cleanupSometimes();
    for (let attempt = 0; attempt < 3; attempt++) {
      const inserted = await this.prisma.$queryRaw<Array<{ id: string }>>`
        INSERT INTO "IdempotencyRecord" ("principal", "key", "requestHash", "expiresAt")
        VALUES (${principal}, ${key}, ${requestHash}, now() + ${this.ttlMs} * interval '1 millisecond')
        ON CONFLICT ("principal", "key") DO NOTHING
        RETURNING "id"`;
      if (inserted[0]) return { kind: 'new', id: inserted[0].id };

      const rows = await this.prisma.$queryRaw<
        Array<{ id: string; requestHash: string; responseStatus: number | null; responseBody: unknown; expired: boolean; abandoned: boolean }>
      >`
        SELECT "id", "requestHash", "responseStatus", "responseBody",
               "expiresAt" < now() AS "expired",
               "createdAt" < now() - ${IN_FLIGHT_TAKEOVER_MS} * interval '1 millisecond' AS "abandoned"
        FROM "IdempotencyRecord" WHERE "principal" = ${principal} AND "key" = ${key}`;
      const existing = rows[0];
      if (!existing) continue; // deleted between the two statements: try to claim it again
      if (existing.expired) {
        await this.prisma.$executeRaw`DELETE FROM "IdempotencyRecord" WHERE "id" = ${existing.id}::uuid AND "expiresAt" < now()`;
        continue;
      }
      if (existing.requestHash !== requestHash) return { kind: 'mismatch' };
      if (existing.responseStatus !== null) return { kind: 'replay', status: existing.responseStatus, body: existing.responseBody };
      if (existing.abandoned) {
        const taken = await this.prisma.$executeRaw`
          UPDATE "IdempotencyRecord" SET "createdAt" = now()
          WHERE "id" = ${existing.id}::uuid AND "responseStatus" IS NULL
            AND "createdAt" < now() - ${IN_FLIGHT_TAKEOVER_MS} * interval '1 millisecond'`;
        if (taken === 1) return { kind: 'new', id: existing.id };
      }
      return { kind: 'in-flight' };
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
    const begun = await this.store.begin(principalScope(principal), key, fingerprint);
    switch (begun.kind) {
      case 'mismatch':
        throw unprocessable(`${IDEMPOTENCY_HEADER} was already used with a different request; use a new key for a new request`, [
          { path: HEADER_PATH, message: 'key reused with a different payload' },
        ]);
      case 'in-flight':
        throw conflict(`A request with this ${IDEMPOTENCY_HEADER} is still being processed; retry later`, [
          { path: HEADER_PATH, message: 'original request still in progress' },
        ]);
      case 'replay': {
        const kind = this.reflector.get<IngestKind | undefined>(INGEST_KIND_METADATA, context.getHandler());
        if (kind) ingestRequestsTotal.inc({ kind, outcome: 'duplicate' });
        response.setHeader('Idempotent-Replayed', 'true');
        if (begun.status >= 400) {
          const stored = (begun.body ?? {}) as { message?: string; issues?: Array<{ path: string; message: string }> };
          throw new ApiError(begun.status, stored.message ?? 'Replayed error', stored.issues ?? []);
        }
        response.status(begun.status);
        return of(begun.body);
      }
      case 'new':
        break;
    }
    const recordId = begun.id;
    return next.handle().pipe(
      mergeMap(async (body: unknown) => {
        await this.store.complete(recordId, response.statusCode, body);
        return body;
      }),
      catchError((error: unknown) =>
        from(
          (async () => {
            const { body } = toErrorBody(error);
            if (isReplayable(body.statusCode)) await this.store.complete(recordId, body.statusCode, body);
            else await this.store.release(recordId);
            throw error;
          })(),
        ),
      ),
    );
  }
}

/** Marks a JSON POST handler as honouring the Idempotency-Key header (and documents it). */
export function Idempotent(kind: IngestKind): MethodDecorator {
  return applyDecorators(
    SetMetadata(INGEST_KIND_METADATA, kind),
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
