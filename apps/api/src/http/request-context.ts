import { randomUUID } from 'node:crypto';
import type { IncomingMessage, ServerResponse } from 'node:http';

/**
 * Every request gets an id: the caller's X-Request-Id when it looks like an id (so a controller's
 * own correlation id shows up in our logs), else a new UUID. It is echoed in the X-Request-Id
 * response header, in every error body and in the request log line.
 */
const REQUEST_ID = Symbol.for('ausline.requestId');
const START_NS = Symbol.for('ausline.requestStartNs');
const SAFE_REQUEST_ID = /^[A-Za-z0-9._:-]{1,64}$/;

type WithContext = { [REQUEST_ID]?: string; [START_NS]?: bigint };

export function requestContextMiddleware(req: IncomingMessage, res: ServerResponse, next: () => void): void {
  const incoming = req.headers['x-request-id'];
  const id = typeof incoming === 'string' && SAFE_REQUEST_ID.test(incoming) ? incoming : randomUUID();
  (req as WithContext)[REQUEST_ID] = id;
  (req as WithContext)[START_NS] = process.hrtime.bigint();
  res.setHeader('X-Request-Id', id);
  next();
}

export function requestIdOf(req: object): string | undefined {
  return (req as WithContext)[REQUEST_ID];
}

/** Milliseconds since the request arrived (0 when the middleware did not run). */
export function elapsedMs(req: object): number {
  const start = (req as WithContext)[START_NS];
  if (start === undefined) return 0;
  return Number(process.hrtime.bigint() - start) / 1e6;
}
