/**
 * The dashboard's only way to the API. Every failure becomes an ApiError with a message a person can
 * act on (describeError): what happened, whether anything was changed, and what to do next.
 */

export interface ErrorIssue {
  path: string;
  message: string;
}

export type ApiErrorKind = 'http' | 'network' | 'bad-response';

export class ApiError extends Error {
  constructor(
    readonly kind: ApiErrorKind,
    readonly status: number,
    message: string,
    readonly issues: ErrorIssue[] = [],
    readonly requestId: string | null = null,
    readonly method = 'GET',
  ) {
    super(message);
    this.name = 'ApiError';
  }
}

type Query = Record<string, string | number | boolean | undefined | null | string[]>;

export interface RequestOptions {
  query?: Query;
  /** Idempotency-Key header for writes the API makes retry-safe by it. */
  idempotencyKey?: string;
  signal?: AbortSignal;
}

export class ApiClient {
  private token: string | null = null;
  /** Called once per request that answered 401 while a token was set (the session is over). */
  onSessionEnded: ((error: ApiError) => void) | null = null;

  constructor(private readonly base = '') {}

  setToken(token: string | null): void {
    this.token = token;
  }

  getToken(): string | null {
    return this.token;
  }

  get<T>(path: string, options: RequestOptions = {}): Promise<T> {
    return this.request<T>('GET', path, undefined, options);
  }

  post<T>(path: string, body?: unknown, options: RequestOptions = {}): Promise<T> {
    return this.request<T>('POST', path, body ?? {}, options);
  }

  url(path: string, query?: Query): string {
    const params = new URLSearchParams();
    for (const [key, value] of Object.entries(query ?? {})) {
      if (value === undefined || value === null || value === '') continue;
      params.set(key, Array.isArray(value) ? value.join(',') : String(value));
    }
    const qs = params.toString();
    return `${this.base}${path}${qs ? `?${qs}` : ''}`;
  }

  authHeaders(): Record<string, string> {
    return this.token ? { authorization: `Bearer ${this.token}` } : {};
  }

  async request<T>(method: 'GET' | 'POST', path: string, body: unknown, options: RequestOptions = {}): Promise<T> {
    const headers: Record<string, string> = { accept: 'application/json', ...this.authHeaders() };
    if (body !== undefined) headers['content-type'] = 'application/json';
    if (options.idempotencyKey) headers['idempotency-key'] = options.idempotencyKey;
    let res: Response;
    try {
      res = await fetch(this.url(path, options.query), {
        method,
        headers,
        body: body === undefined ? null : JSON.stringify(body),
        cache: 'no-store',
        signal: options.signal ?? null,
      });
    } catch (error) {
      if (error instanceof DOMException && error.name === 'AbortError') throw error;
      throw new ApiError('network', 0, 'The Ausline server could not be reached', [], null, method);
    }
    const requestId = res.headers.get('x-request-id');
    if (res.status === 204) return undefined as T;
    const text = await res.text();
    let json: unknown = undefined;
    try {
      json = text === '' ? undefined : JSON.parse(text);
    } catch {
      if (res.ok) throw new ApiError('bad-response', res.status, 'The server answered something that is not JSON', [], requestId, method);
    }
    if (!res.ok) {
      const b = (typeof json === 'object' && json !== null ? json : {}) as { message?: unknown; issues?: unknown; requestId?: unknown };
      const issues = Array.isArray(b.issues)
        ? b.issues.filter((i): i is ErrorIssue => typeof i === 'object' && i !== null && typeof (i as ErrorIssue).path === 'string' && typeof (i as ErrorIssue).message === 'string')
        : [];
      const message = typeof b.message === 'string' && b.message !== '' ? b.message : `${res.status} ${res.statusText}`;
      const error = new ApiError('http', res.status, message, issues, typeof b.requestId === 'string' ? b.requestId : requestId, method);
      if (res.status === 401 && this.token && this.onSessionEnded) this.onSessionEnded(error);
      throw error;
    }
    return json as T;
  }
}

export interface ErrorDescription {
  title: string;
  detail: string;
  issues: ErrorIssue[];
}

/** What to tell a person about a failed call. `doing` names the attempt: 'Saving the disposition'. */
export function describeError(error: unknown, doing: string): ErrorDescription {
  if (!(error instanceof ApiError)) {
    const message = error instanceof Error ? error.message : String(error);
    return { title: `${doing} failed`, detail: `Unexpected problem in the dashboard: ${message}. Reload the page; if it happens again, report it.`, issues: [] };
  }
  const unchanged = error.method === 'GET' ? '' : ' Nothing was changed.';
  const ref = error.requestId ? ` (request ${error.requestId})` : '';
  switch (error.kind) {
    case 'network':
      return {
        title: `${doing} failed: no connection`,
        detail: `The Ausline server could not be reached. Check the network or whether the server is running, then try again.${error.method === 'GET' ? '' : ' The change may not have been saved: look before repeating it.'}`,
        issues: [],
      };
    case 'bad-response':
      return { title: `${doing} failed`, detail: `The server answered in a form the dashboard cannot read${ref}. Reload the page.`, issues: [] };
    case 'http':
      break;
  }
  const s = error.status;
  if (s === 400 || s === 422) {
    return { title: `${doing} was refused: check the input`, detail: `${error.message}.${unchanged}`, issues: error.issues };
  }
  if (s === 401) return { title: 'Signed out', detail: `${error.message}. Sign in again to continue.`, issues: [] };
  if (s === 403) return { title: `${doing} is not allowed for you`, detail: `${error.message}.${unchanged}`, issues: [] };
  if (s === 404) return { title: `${doing} failed: not found`, detail: `${error.message}. It may have been removed, or the link is wrong.`, issues: [] };
  if (s === 409) {
    return {
      title: `${doing} conflicts with the current state`,
      detail: `${error.message}. Someone or something may have changed it meanwhile: reload and look again.${unchanged}`,
      issues: error.issues,
    };
  }
  if (s === 413) return { title: `${doing} failed: too large`, detail: `${error.message}.${unchanged}`, issues: [] };
  if (s === 415) return { title: `${doing} failed: wrong file type`, detail: `${error.message}.${unchanged}`, issues: [] };
  if (s === 429) return { title: `${doing} failed: too many requests`, detail: 'Wait a moment and try again.', issues: [] };
  if (s >= 500) {
    return {
      title: `${doing} failed: server error (${s})`,
      detail: `The server could not complete it${ref}. Try again in a minute; if it persists, report it with the request id.${error.method === 'GET' ? '' : ' Check whether the change was saved before repeating it.'}`,
      issues: [],
    };
  }
  return { title: `${doing} failed (${s})`, detail: `${error.message}${ref}.`, issues: error.issues };
}

/** A fresh key for one user action, so a double click or a retry after a timeout is applied once. */
export function newIdempotencyKey(): string {
  // crypto.randomUUID exists only in secure contexts (https, localhost); plant screens often use plain http.
  const bytes = crypto.getRandomValues(new Uint8Array(16));
  bytes[6] = (bytes[6]! & 0x0f) | 0x40;
  bytes[8] = (bytes[8]! & 0x3f) | 0x80;
  const hex = [...bytes].map((b) => b.toString(16).padStart(2, '0')).join('');
  return `${hex.slice(0, 8)}-${hex.slice(8, 12)}-${hex.slice(12, 16)}-${hex.slice(16, 20)}-${hex.slice(20)}`;
}
