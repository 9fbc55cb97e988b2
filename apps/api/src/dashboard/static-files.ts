import { existsSync, readdirSync, statSync } from 'node:fs';
import { readFile } from 'node:fs/promises';
import type { IncomingMessage, ServerResponse } from 'node:http';
import { extname, join, relative, sep } from 'node:path';
import { fileURLToPath } from 'node:url';

/**
 * Serves the built dashboard (apps/dashboard, `vite build` output) from the API's own origin, so the
 * browser talks to /v1 without CORS and the session token never leaves the origin. Only GET/HEAD of
 * files that exist in the build folder are answered; everything else falls through to the API (which
 * answers its JSON 404). The dashboard routes by the URL hash (#/board, #/batches/<id>), so the only
 * HTML path is '/'.
 *
 * index.html gets the plant time zone (PLANT_TIME_ZONE) filled in, so every time on screen is the
 * plant's wall clock from the first paint, without an extra request.
 */

/** Where `vite build apps/dashboard` writes: apps/dashboard/dist (same depth from src/ and dist/). */
export const DEFAULT_DASHBOARD_DIR = fileURLToPath(new URL('../../../dashboard/dist', import.meta.url));

/** Placeholder in apps/dashboard/index.html that the server replaces with the plant time zone. */
export const TIME_ZONE_PLACEHOLDER = '__AUSLINE_PLANT_TIME_ZONE__';

/**
 * The dashboard's Content-Security-Policy: scripts, styles and data from this origin only (Vite emits
 * no inline script or style); the API's stricter policy stays on /v1.
 */
export const DASHBOARD_CSP = [
  "default-src 'self'",
  "script-src 'self'",
  "style-src 'self'",
  "img-src 'self' data: blob:",
  "connect-src 'self'",
  "font-src 'self'",
  "object-src 'none'",
  "base-uri 'none'",
  "form-action 'self'",
  "frame-ancestors 'none'",
].join('; ');

const CONTENT_TYPES: Record<string, string> = {
  '.html': 'text/html; charset=utf-8',
  '.js': 'text/javascript; charset=utf-8',
  '.mjs': 'text/javascript; charset=utf-8',
  '.css': 'text/css; charset=utf-8',
  '.map': 'application/json; charset=utf-8',
  '.json': 'application/json; charset=utf-8',
  '.svg': 'image/svg+xml',
  '.png': 'image/png',
  '.ico': 'image/x-icon',
  '.woff2': 'font/woff2',
  '.txt': 'text/plain; charset=utf-8',
};

/** Paths the API itself owns; never answered from the dashboard folder. */
const API_PREFIXES = ['/v1/', '/health/', '/metrics', '/docs'];

export interface DashboardFiles {
  dir: string;
  /** True when the folder holds an index.html. */
  built: boolean;
  handler(req: IncomingMessage, res: ServerResponse, next: (error?: unknown) => void): void;
}

export function dashboardFiles(dir: string, plantTimeZone: string): DashboardFiles {
  let files = scan(dir);
  const built = files.has('/index.html');

  const send = async (req: IncomingMessage, res: ServerResponse, path: string): Promise<void> => {
    const file = files.get(path);
    if (!file) return;
    let body: Buffer = await readFile(file);
    const isIndex = path === '/index.html';
    if (isIndex) body = Buffer.from(body.toString('utf8').replaceAll(TIME_ZONE_PLACEHOLDER, escapeHtml(plantTimeZone)), 'utf8');
    res.statusCode = 200;
    res.setHeader('Content-Type', CONTENT_TYPES[extname(path)] ?? 'application/octet-stream');
    res.setHeader('Content-Length', body.length);
    res.setHeader('Content-Security-Policy', DASHBOARD_CSP);
    // Vite names assets by content hash: cache them for good; the page itself is always re-checked.
    res.setHeader('Cache-Control', path.startsWith('/assets/') ? 'public, max-age=31536000, immutable' : 'no-cache');
    res.end(req.method === 'HEAD' ? undefined : body);
  };

  const notBuilt = (req: IncomingMessage, res: ServerResponse): void => {
    const body = Buffer.from(
      '<!doctype html><meta charset="utf-8"><title>Ausline</title><p>The dashboard is not built. ' +
        'Run <code>npm run build:dashboard</code> (or set DASHBOARD_DIR to a built copy) and restart the API. ' +
        'The API itself is running: see <a href="/docs">/docs</a>.</p>',
      'utf8',
    );
    res.statusCode = 503;
    res.setHeader('Content-Type', 'text/html; charset=utf-8');
    res.setHeader('Content-Security-Policy', "default-src 'none'; frame-ancestors 'none'");
    res.setHeader('Cache-Control', 'no-store');
    res.end(req.method === 'HEAD' ? undefined : body);
  };

  const handler = (req: IncomingMessage, res: ServerResponse, next: (error?: unknown) => void): void => {
    if (req.method !== 'GET' && req.method !== 'HEAD') return next();
    let path: string;
    try {
      path = decodeURIComponent(new URL(req.url ?? '/', 'http://localhost').pathname);
    } catch {
      return next();
    }
    if (API_PREFIXES.some((p) => path === p.replace(/\/$/, '') || path.startsWith(p))) return next();
    if (path === '/') path = '/index.html';
    if (!built) return path === '/index.html' ? notBuilt(req, res) : next();
    // A rebuild while the API runs writes new hashed asset names: look again once before giving up.
    if (!files.has(path) && path.startsWith('/assets/')) files = scan(dir);
    if (!files.has(path)) return next();
    send(req, res, path).catch(next);
  };

  return { dir, built, handler };
}

/** Every file under dir as '/relative/path' -> absolute path (the only paths ever served). */
function scan(dir: string): Map<string, string> {
  const out = new Map<string, string>();
  if (!existsSync(dir)) return out;
  const walk = (folder: string, depth: number): void => {
    if (depth > 4) return;
    for (const name of readdirSync(folder)) {
      if (name.startsWith('.')) continue;
      const full = join(folder, name);
      const st = statSync(full);
      if (st.isDirectory()) walk(full, depth + 1);
      else if (st.isFile()) out.set('/' + relative(dir, full).split(sep).join('/'), full);
    }
  };
  walk(dir, 0);
  return out;
}

function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}
