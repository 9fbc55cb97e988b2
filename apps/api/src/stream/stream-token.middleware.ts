import type { IncomingMessage, ServerResponse } from 'node:http';

/**
 * Browsers' EventSource cannot set request headers, so GET /v1/stream also accepts the session token
 * as `?token=`. This middleware (installed for that route only) turns it into the usual
 * `Authorization: Bearer <token>` header before the global AccessGuard runs; the guard then treats it
 * like any other session. A request that already carries a credential header is left alone. Query
 * strings never reach the logs (request-log.ts logs the path only).
 */
export function streamTokenMiddleware(req: IncomingMessage, _res: ServerResponse, next: () => void): void {
  if (req.headers.authorization === undefined && req.headers['x-api-key'] === undefined) {
    const token = new URL(req.url ?? '/', 'http://localhost').searchParams.get('token');
    if (token) req.headers.authorization = `Bearer ${token}`;
  }
  next();
}
