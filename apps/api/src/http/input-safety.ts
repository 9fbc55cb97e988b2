import type { IncomingMessage, ServerResponse } from 'node:http';
import { ApiError, badRequest, MAX_LISTED_ISSUES, summarizeIssues, type ErrorIssue } from './errors.js';

/**
 * Input no endpoint can take, refused with a 400 naming the place before any handler, interceptor or
 * schema sees it (found by the fuzz suite, tests/fuzz):
 *
 *   - U+0000 in a string or a field name: PostgreSQL text and jsonb cannot hold it, so the insert
 *     failed with a 500 (and the value could never be stored verbatim anyway);
 *   - a lone UTF-16 surrogate ("\ud800" in JSON): not Unicode text; stored as U+FFFD it would no
 *     longer be the value the client sent;
 *   - a field named "__proto__": assigning it on a plain object sets the prototype instead of a field,
 *     so a record schema (chemistry, agitation coefficients) silently dropped it, and a misspelt field
 *     silently ignored is a lost value;
 *   - nesting deeper than MAX_INPUT_DEPTH: no payload needs it, and recursive code downstream (the
 *     Idempotency-Key fingerprint) overflowed the stack with a 500.
 *
 * The walk is iterative, so a hostile depth cannot overflow it either.
 */
export const MAX_INPUT_DEPTH = 32;

const LONE_SURROGATE = /[\ud800-\udbff](?![\udc00-\udfff])|(?<![\ud800-\udbff])[\udc00-\udfff]/;

/** What is wrong with a piece of text, or undefined when it can be stored as sent. */
export function unstorableText(text: string): string | undefined {
  if (text.includes('\u0000')) return 'contains a NUL character (U+0000), which cannot be stored';
  if (LONE_SURROGATE.test(text)) return 'contains a lone UTF-16 surrogate, which is not Unicode text';
  return undefined;
}

/** Where a node sits: its parent and key. Paths are spelled out only for the nodes that have an issue. */
interface Place {
  parent: Place | null;
  key: string | number;
}

function pathOf(place: Place | null, root: string): string {
  const parts: string[] = [];
  for (let p = place; p; p = p.parent) parts.push(p.key === '' ? '""' : String(p.key));
  if (root !== '') parts.push(root);
  return parts.reverse().join('.') || 'body';
}

/**
 * Issues for a parsed JSON value (or a query/params object); `root` prefixes the paths ('query',
 * 'params', '' for bodies). Stops after MAX_LISTED_ISSUES + 1 issues. Runs on every request, so a clean
 * body costs one visit per node and no string building.
 */
export function unsafeInputIssues(value: unknown, root = ''): ErrorIssue[] {
  const issues: ErrorIssue[] = [];
  const stack: Array<{ value: unknown; place: Place | null; depth: number }> = [{ value, place: null, depth: 0 }];
  while (stack.length > 0 && issues.length <= MAX_LISTED_ISSUES) {
    const node = stack.pop()!;
    if (typeof node.value === 'string') {
      const problem = unstorableText(node.value);
      if (problem) issues.push({ path: pathOf(node.place, root), message: problem });
      continue;
    }
    if (node.value === null || typeof node.value !== 'object') continue;
    if (node.depth >= MAX_INPUT_DEPTH) {
      issues.push({ path: pathOf(node.place, root), message: `nested more than ${MAX_INPUT_DEPTH} levels deep` });
      continue;
    }
    if (Array.isArray(node.value)) {
      for (let i = node.value.length - 1; i >= 0; i--) stack.push({ value: node.value[i], place: { parent: node.place, key: i }, depth: node.depth + 1 });
      continue;
    }
    const keys = Object.keys(node.value);
    for (let i = keys.length - 1; i >= 0; i--) {
      const key = keys[i]!;
      const place = { parent: node.place, key };
      if (key === '__proto__') {
        issues.push({ path: pathOf(place, root), message: "'__proto__' is not allowed as a field name" });
        continue;
      }
      const problem = unstorableText(key);
      if (problem) {
        issues.push({ path: pathOf(place, root), message: `field name ${problem}` });
        continue;
      }
      stack.push({ value: (node.value as Record<string, unknown>)[key], place, depth: node.depth + 1 });
    }
  }
  return issues;
}

/** Issues for a text body (CSV): where the first bad characters are, by line and column. */
export function unsafeTextIssues(text: string): ErrorIssue[] {
  const issues: ErrorIssue[] = [];
  const lines = text.split(/\r\n|\n|\r/);
  for (let i = 0; i < lines.length && issues.length < MAX_LISTED_ISSUES; i++) {
    const line = lines[i]!;
    const problem = unstorableText(line);
    if (!problem) continue;
    const nul = line.indexOf('\u0000');
    const column = (nul >= 0 ? nul : line.search(LONE_SURROGATE)) + 1;
    issues.push({ path: 'body', message: `line ${i + 1}, column ${column}: ${problem}` });
  }
  return issues;
}

/** The request carries a body (RFC 9112 §6.3: a Transfer-Encoding, or a Content-Length above 0). */
function hasBody(req: IncomingMessage): boolean {
  if (req.headers['transfer-encoding'] !== undefined) return true;
  const length = req.headers['content-length'];
  return length !== undefined && Number(length) > 0;
}

/**
 * Express middleware, after the body parsers: refuses a request whose parsed body holds input that
 * unsafeInputIssues / unsafeTextIssues report, with the API's 400 (through the global error filter),
 * and a body that no parser read (a media type other than JSON or CSV/plain text) with 415: the
 * fuzz suite found an acknowledge sent as application/octet-stream acknowledged without its reason.
 */
export function inputSafetyMiddleware(req: IncomingMessage, _res: ServerResponse, next: (error?: unknown) => void): void {
  const body = (req as IncomingMessage & { body?: unknown }).body;
  if (body === undefined && hasBody(req)) {
    const mediaType = (req.headers['content-type'] ?? '').split(';')[0]!.trim() || 'no content type';
    return next(
      new ApiError(415, `Unsupported media type ${mediaType}: send application/json (or text/csv where a file is expected)`, [
        { path: 'headers.content-type', message: `${mediaType} is not read by this API` },
      ]),
    );
  }
  const issues = typeof body === 'string' ? unsafeTextIssues(body) : body !== null && typeof body === 'object' ? unsafeInputIssues(body) : [];
  if (issues.length === 0) return next();
  next(badRequest(summarizeIssues('request body', issues), issues.slice(0, MAX_LISTED_ISSUES)));
}
