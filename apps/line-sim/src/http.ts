/**
 * The simulator's HTTP: plain fetch against the public Ausline API, as any controller or script would use it.
 */

export type Credentials = { apiKey: string } | { bearer: string } | null;

export interface HttpReply {
  status: number;
  body: unknown;
  /** From a Retry-After header (RFC 9110 §10.2.3: seconds or an HTTP date), ms; null when absent. */
  retryAfterMs: number | null;
}

/** No HTTP reply at all: connection refused or reset, DNS, timeout. */
export class TransportError extends Error {
  constructor(message: string, options?: { cause?: unknown }) {
    super(message, options);
    this.name = 'TransportError';
  }
}

/** A non-2xx reply where the caller needed success (setup steps). */
export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly body: unknown,
    what: string,
  ) {
    super(`${what}: HTTP ${status}${messageOf(body) ? `: ${messageOf(body)}` : ''}`);
    this.name = 'ApiError';
  }
}

export function messageOf(body: unknown): string {
  if (body && typeof body === 'object' && 'message' in body && typeof (body as { message: unknown }).message === 'string') {
    const b = body as { message: string; issues?: Array<{ path: string; message: string }> };
    const first = b.issues?.[0];
    return first && !b.message.includes(first.message) ? `${b.message} (${first.path}: ${first.message})` : b.message;
  }
  return typeof body === 'string' ? body.slice(0, 300) : '';
}

export interface RequestOptions {
  credentials: Credentials;
  body?: unknown;
  idempotencyKey?: string;
  timeoutMs?: number;
}

export const DEFAULT_TIMEOUT_MS = 20_000;

export async function httpRequest(baseUrl: string, method: string, path: string, options: RequestOptions): Promise<HttpReply> {
  const headers: Record<string, string> = { accept: 'application/json' };
  if (options.body !== undefined) headers['content-type'] = 'application/json';
  if (options.credentials && 'apiKey' in options.credentials) headers.authorization = `ApiKey ${options.credentials.apiKey}`;
  if (options.credentials && 'bearer' in options.credentials) headers.authorization = `Bearer ${options.credentials.bearer}`;
  // Structured Field String (draft-ietf-httpapi-idempotency-key-header, practice.md §5.4).
  if (options.idempotencyKey) headers['idempotency-key'] = `"${options.idempotencyKey}"`;
  let response: Response;
  try {
    response = await fetch(`${baseUrl}${path}`, {
      method,
      headers,
      body: options.body === undefined ? undefined : JSON.stringify(options.body),
      signal: AbortSignal.timeout(options.timeoutMs ?? DEFAULT_TIMEOUT_MS),
    });
  } catch (error) {
    const cause = error instanceof Error && 'cause' in error ? (error as { cause?: unknown }).cause : undefined;
    const detail = cause instanceof Error ? cause.message : error instanceof Error ? error.message : String(error);
    throw new TransportError(`${method} ${path}: ${detail}`, { cause: error });
  }
  let body: unknown;
  try {
    const text = await response.text();
    body = text && (response.headers.get('content-type') ?? '').includes('json') ? JSON.parse(text) : text;
  } catch (error) {
    throw new TransportError(`${method} ${path}: reply body lost (${error instanceof Error ? error.message : String(error)})`, { cause: error });
  }
  return { status: response.status, body, retryAfterMs: parseRetryAfter(response.headers.get('retry-after')) };
}

export function parseRetryAfter(value: string | null, nowMs = Date.now()): number | null {
  if (!value) return null;
  if (/^\d+$/.test(value.trim())) return Number(value.trim()) * 1000;
  const at = Date.parse(value);
  return Number.isFinite(at) ? Math.max(0, at - nowMs) : null;
}

export type ReplyOutcome = 'ok' | 'retry' | 'too-large' | 'reject';

/**
 * What a controller does with a reply. Retry: the server is down, overloaded or still busy with the same
 * Idempotency-Key (409 naming the header); the request may be sent again as it is. Reject: the request can
 * never succeed as sent (400, 401/403, 404, 409 contradicting stored data, 422); retrying would only repeat it.
 */
export function classifyReply(reply: HttpReply): ReplyOutcome {
  const s = reply.status;
  if (s >= 200 && s < 300) return 'ok';
  if (s === 413) return 'too-large';
  if (s === 408 || s === 425 || s === 429 || s >= 500) return 'retry';
  if (s === 409 && issuePaths(reply.body).some((p) => p.toLowerCase() === 'headers.idempotency-key')) return 'retry';
  return 'reject';
}

function issuePaths(body: unknown): string[] {
  if (!body || typeof body !== 'object' || !Array.isArray((body as { issues?: unknown }).issues)) return [];
  return (body as { issues: Array<{ path?: unknown }> }).issues.map((i) => String(i.path ?? ''));
}

/** A small client for setup steps: every call must succeed, or it throws ApiError / TransportError. */
export class ApiClient {
  constructor(
    readonly baseUrl: string,
    private readonly credentials: Credentials = null,
  ) {}

  with(credentials: Credentials): ApiClient {
    return new ApiClient(this.baseUrl, credentials);
  }

  async call<T>(method: string, path: string, body?: unknown, options: { idempotencyKey?: string; accept?: number[] } = {}): Promise<{ status: number; body: T }> {
    const reply = await httpRequest(this.baseUrl, method, path, { credentials: this.credentials, body, idempotencyKey: options.idempotencyKey });
    const accepted = options.accept ?? [];
    if ((reply.status >= 200 && reply.status < 300) || accepted.includes(reply.status)) return { status: reply.status, body: reply.body as T };
    throw new ApiError(reply.status, reply.body, `${method} ${path}`);
  }

  async get<T>(path: string): Promise<T> {
    return (await this.call<T>('GET', path)).body;
  }

  async post<T>(path: string, body: unknown, options: { idempotencyKey?: string } = {}): Promise<T> {
    return (await this.call<T>('POST', path, body, options)).body;
  }
}
