import type { IncomingMessage, ServerResponse } from 'node:http';

/**
 * Security headers for an API that serves JSON (and the OpenAPI page). No helmet dependency: the set
 * is small and fixed. Responses to /v1 are never cached by shared caches (they carry plant data).
 */
const API_CSP = "default-src 'none'; frame-ancestors 'none'";
// The OpenAPI page loads its own scripts and styles (swagger-ui) from this origin.
const DOCS_CSP = "default-src 'self'; img-src 'self' data:; style-src 'self' 'unsafe-inline'; script-src 'self'; frame-ancestors 'none'";

export function securityHeadersMiddleware(req: IncomingMessage, res: ServerResponse, next: () => void): void {
  const path = req.url ?? '';
  res.setHeader('X-Content-Type-Options', 'nosniff');
  res.setHeader('X-Frame-Options', 'DENY');
  res.setHeader('Referrer-Policy', 'no-referrer');
  res.setHeader('Cross-Origin-Opener-Policy', 'same-origin');
  res.setHeader('Cross-Origin-Resource-Policy', 'same-origin');
  res.setHeader('Content-Security-Policy', path.startsWith('/docs') ? DOCS_CSP : API_CSP);
  if (path.startsWith('/v1/')) res.setHeader('Cache-Control', 'no-store');
  next();
}

/**
 * CORS is closed unless CORS_ORIGINS lists exact origins: without CORS headers a browser on another
 * origin cannot read our responses. Credentials travel in the Authorization header, never cookies.
 */
export function corsOptions(origins: readonly string[] | undefined): { origin: string[]; credentials: false; maxAge: number } | undefined {
  const list = (origins ?? []).map((o) => o.trim()).filter((o) => o !== '');
  if (list.length === 0) return undefined;
  return { origin: list, credentials: false, maxAge: 600 };
}
