import type { IncomingMessage, ServerResponse } from 'node:http';
import { PRINCIPAL_PROPERTY, type Principal } from '../auth/access.js';
import { httpRequestDurationSeconds, httpRequestsTotal } from '../ops/metrics.js';
import { pathOnly } from './errors.js';
import type { JsonLogger } from './logger.js';
import { elapsedMs, requestIdOf } from './request-context.js';

/**
 * One log line per request when the response is finished (or the client went away):
 *   {"msg":"request","method":"POST","path":"/v1/equipment/…/samples","status":201,"ms":12.3,
 *    "principal":"apiKey","principalId":"ak_1a2b3c4d5e6f","requestId":"…"}
 * principalId is the user id or the key's public prefix, never a token or secret. Also feeds the
 * HTTP request metrics, labelled by route pattern (not the raw path) to keep label counts bounded.
 */
type RoutedRequest = IncomingMessage & { originalUrl?: string; route?: { path?: unknown }; [PRINCIPAL_PROPERTY]?: Principal };

export function requestLogMiddleware(logger: JsonLogger) {
  return (req: IncomingMessage, res: ServerResponse, next: () => void): void => {
    let done = false;
    const finish = (aborted: boolean) => {
      if (done) return;
      done = true;
      const routed = req as RoutedRequest;
      const ms = elapsedMs(req);
      const principal = routed[PRINCIPAL_PROPERTY];
      const route = typeof routed.route?.path === 'string' ? routed.route.path : 'unmatched';
      const status = aborted && !res.headersSent ? 499 : res.statusCode;
      httpRequestsTotal.inc({ method: req.method ?? 'UNKNOWN', route, status: String(status) });
      httpRequestDurationSeconds.observe({ method: req.method ?? 'UNKNOWN', route }, ms / 1000);
      logger.event(status >= 500 ? 'error' : 'info', {
        msg: 'request',
        method: req.method,
        path: pathOnly(routed.originalUrl ?? req.url ?? ''),
        route,
        status,
        ms: Math.round(ms * 10) / 10,
        principal: principal?.kind ?? 'anonymous',
        ...(principal ? { principalId: principal.kind === 'user' ? principal.userId : principal.prefix } : {}),
        ...(aborted ? { aborted: true } : {}),
        requestId: requestIdOf(req),
      });
    };
    res.on('finish', () => finish(false));
    res.on('close', () => finish(!res.writableFinished));
    next();
  };
}
