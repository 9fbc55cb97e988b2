import { STATUS_CODES } from 'node:http';
import { Catch, HttpException, type ArgumentsHost, type ExceptionFilter } from '@nestjs/common';
import { ZodError } from 'zod';
import type { JsonLogger } from './logger.js';
import { requestIdOf } from './request-context.js';

/**
 * The one error shape of the API (API-CONTRACTS.md "Errors"):
 *
 *   { "statusCode": 400, "error": "Bad Request", "message": "<one line>",
 *     "issues": [{ "path": "samples.3.value", "message": "expected number, received string" }],
 *     "requestId": "..." }
 *
 * Throw ApiError (or the helpers below) from services and controllers; anything else that escapes is
 * turned into this shape by ApiExceptionFilter: Nest's HttpExceptions keep their status, body-parser
 * failures become 400/413/415, zod errors 400, a few Prisma errors their obvious 4xx, and everything
 * unexpected a 500 that names only the request id (the details go to the log).
 */

export interface ErrorIssue {
  /** Dotted path of the offending field ('samples.3.value', 'query.from'); the root part name for the whole thing. */
  path: string;
  message: string;
}

export interface ErrorBody {
  statusCode: number;
  error: string;
  message: string;
  issues: ErrorIssue[];
  requestId?: string;
}

/** At most this many issues are listed; the message says how many there were. */
export const MAX_LISTED_ISSUES = 100;

/**
 * Longest message and issue texts in a reply. Messages may quote the offending value; the fuzz suite
 * found a 100,000-character testStandard echoed whole into the 400, so quotes are cut here, once.
 */
export const MAX_MESSAGE_CHARS = 500;
export const MAX_ISSUE_MESSAGE_CHARS = 300;
export const MAX_ISSUE_PATH_CHARS = 200;

function clip(text: string, max: number): string {
  return text.length <= max ? text : `${text.slice(0, max - 1)}…`;
}

export class ApiError extends HttpException {
  constructor(
    status: number,
    message: string,
    readonly issues: ErrorIssue[] = [],
  ) {
    super({ statusCode: status, error: statusText(status), message, issues }, status);
  }
}

export const badRequest = (message: string, issues: ErrorIssue[] = []): ApiError => new ApiError(400, message, issues);
export const unauthorized = (message: string): ApiError => new ApiError(401, message);
export const forbidden = (message: string): ApiError => new ApiError(403, message);
export const notFound = (message: string): ApiError => new ApiError(404, message);
export const conflict = (message: string, issues: ErrorIssue[] = []): ApiError => new ApiError(409, message, issues);
export const unprocessable = (message: string, issues: ErrorIssue[] = []): ApiError => new ApiError(422, message, issues);

export function statusText(status: number): string {
  return STATUS_CODES[status] ?? 'Error';
}

/** Errors raised by body-parser/raw-body before any route runs (they carry a `type`). */
const BODY_PARSER_ERRORS: Record<string, { status: number; describe: (error: BodyParserError) => string }> = {
  'entity.parse.failed': { status: 400, describe: (e) => `Malformed JSON body: ${oneLine(e.message)}` },
  'entity.too.large': {
    status: 413,
    describe: (e) => `Request body is larger than the limit of ${formatBytes(e.limit)}${e.length ? ` (got ${formatBytes(e.length)})` : ''}`,
  },
  'encoding.unsupported': { status: 415, describe: (e) => `Unsupported content encoding: ${oneLine(e.message)}` },
  'charset.unsupported': { status: 415, describe: (e) => `Unsupported charset: ${oneLine(e.message)}` },
  'request.aborted': { status: 400, describe: () => 'Request body was aborted by the client' },
  'request.size.invalid': { status: 400, describe: () => 'Request body length does not match Content-Length' },
};

interface BodyParserError extends Error {
  type: string;
  status?: number;
  limit?: number;
  length?: number;
  expose?: boolean;
}

function isBodyParserError(error: unknown): error is BodyParserError {
  return error instanceof Error && typeof (error as Partial<BodyParserError>).type === 'string';
}

function formatBytes(bytes: number | undefined): string {
  if (bytes === undefined) return 'the limit';
  return bytes >= 1024 * 1024 ? `${(bytes / (1024 * 1024)).toFixed(1)} MB` : `${bytes} bytes`;
}

function oneLine(text: string): string {
  return text.replace(/\s+/g, ' ').trim().slice(0, 300);
}

/** Maps zod issues to {path, message}; `root` prefixes every path (e.g. 'query'), '' for bodies. */
export function issuesFromZod(error: ZodError, root = ''): ErrorIssue[] {
  const issues: ErrorIssue[] = [];
  // An empty field name shows as "" (it would otherwise vanish from the path).
  const segment = (part: PropertyKey): string => (part === '' ? '""' : String(part));
  for (const issue of error.issues) {
    const base = [...(root === '' ? [] : [root]), ...issue.path.map(segment)];
    if (issue.code === 'unrecognized_keys') {
      for (const key of issue.keys) issues.push({ path: [...base, segment(key)].join('.'), message: 'unknown field' });
      continue;
    }
    issues.push({ path: base.length > 0 ? base.join('.') : root || 'body', message: issue.message });
  }
  return issues;
}

/** One line naming the first problem and how many more there are. */
export function summarizeIssues(what: string, issues: ErrorIssue[]): string {
  const first = issues[0];
  if (!first) return `Invalid ${what}`;
  const more = issues.length > 1 ? ` (and ${issues.length - 1} more issue${issues.length > 2 ? 's' : ''})` : '';
  return `Invalid ${what}: ${first.path}: ${first.message}${more}`;
}

interface PrismaLikeError {
  name: string;
  code: string;
  meta?: Record<string, unknown>;
}

function isPrismaKnownError(error: unknown): error is PrismaLikeError {
  return (
    error instanceof Error &&
    error.name === 'PrismaClientKnownRequestError' &&
    typeof (error as Partial<PrismaLikeError>).code === 'string'
  );
}

/** The PostgreSQL SQLSTATE behind a Prisma error (driver adapter or raw query), when it says. */
function sqlStateOf(error: PrismaLikeError): string | undefined {
  const meta = error.meta ?? {};
  const adapter = meta['driverAdapterError'] as { cause?: { originalCode?: unknown; code?: unknown } } | undefined;
  const code = adapter?.cause?.originalCode ?? adapter?.cause?.code ?? meta['code'];
  return typeof code === 'string' && /^[0-9A-Z]{5}$/.test(code) ? code : undefined;
}

/** Turns anything thrown into the status and body the client gets; `unexpected` marks a 500. */
export function toErrorBody(exception: unknown): { body: ErrorBody; unexpected: boolean } {
  const make = (status: number, message: string, issues: ErrorIssue[] = []): ErrorBody => ({
    statusCode: status,
    error: statusText(status),
    message: clip(message, MAX_MESSAGE_CHARS),
    issues: issues.slice(0, MAX_LISTED_ISSUES).map((i) => ({ path: clip(i.path, MAX_ISSUE_PATH_CHARS), message: clip(i.message, MAX_ISSUE_MESSAGE_CHARS) })),
  });

  // Nest's Express adapter wraps body-parser failures in an HttpException; explain them ourselves.
  if (exception instanceof HttpException && isBodyParserError(exception.cause)) return toErrorBody(exception.cause);
  if (exception instanceof HttpException && exception.cause instanceof URIError) {
    return { body: make(400, `Malformed URL: ${oneLine(exception.cause.message)}`), unexpected: false };
  }
  if (exception instanceof ApiError) {
    return { body: make(exception.getStatus(), exception.message, exception.issues), unexpected: false };
  }
  if (exception instanceof HttpException) {
    const status = exception.getStatus();
    const response = exception.getResponse();
    let message = exception.message;
    let issues: ErrorIssue[] = [];
    if (typeof response === 'string') message = response;
    else if (response && typeof response === 'object') {
      const candidate = (response as { message?: unknown }).message;
      if (typeof candidate === 'string') message = candidate;
      else if (Array.isArray(candidate)) {
        message = candidate.map(String).join('; ');
        issues = candidate.map((m) => ({ path: 'body', message: String(m) }));
      }
    }
    return { body: make(status, oneLine(message), issues), unexpected: status >= 500 };
  }
  if (exception instanceof ZodError) {
    const issues = issuesFromZod(exception);
    return { body: make(400, summarizeIssues('request', issues), issues), unexpected: false };
  }
  if (isBodyParserError(exception)) {
    const known = BODY_PARSER_ERRORS[exception.type];
    if (known) return { body: make(known.status, known.describe(exception)), unexpected: false };
    if (exception.expose && exception.status && exception.status >= 400 && exception.status < 500) {
      return { body: make(exception.status, oneLine(exception.message)), unexpected: false };
    }
  }
  if (isPrismaKnownError(exception)) {
    // Safety net only: services should check and explain these themselves.
    switch (exception.code) {
      case 'P2002':
        return { body: make(409, 'A record with the same unique value already exists'), unexpected: false };
      case 'P2025':
        return { body: make(404, 'The record does not exist'), unexpected: false };
      case 'P2003':
        return { body: make(409, 'The request refers to a record that does not exist or is still referenced'), unexpected: false };
      case 'P2023':
        return { body: make(400, 'A value has the wrong format for its column (e.g. an id that is not a UUID)'), unexpected: false };
    }
    // PostgreSQL "data exception" (SQLSTATE class 22: a date before year 1, a number too large for
    // its column, text it cannot hold): the request carried a value validation let through. The
    // fuzz suite found such values answered 500; they are the caller's to fix, so 400.
    if (sqlStateOf(exception)?.startsWith('22') || exception.code === 'P2020') {
      return {
        body: make(400, 'A value in the request cannot be stored: out of range or not valid for its column (e.g. a date before year 1 or a number too large)', [
          { path: 'body', message: 'a value is out of range for the database' },
        ]),
        unexpected: false,
      };
    }
  }
  return { body: make(500, 'Internal server error; quote the request id when reporting it'), unexpected: true };
}

interface ExpressLikeResponse {
  headersSent: boolean;
  status(code: number): ExpressLikeResponse;
  setHeader(name: string, value: string): void;
  json(body: unknown): void;
  end(): void;
}

@Catch()
export class ApiExceptionFilter implements ExceptionFilter {
  constructor(private readonly logger: JsonLogger) {}

  catch(exception: unknown, host: ArgumentsHost): void {
    const http = host.switchToHttp();
    const request = http.getRequest<{ method?: string; originalUrl?: string; url?: string }>();
    const response = http.getResponse<ExpressLikeResponse>();
    const requestId = requestIdOf(request);
    const { body, unexpected } = toErrorBody(exception);
    body.requestId = requestId;

    if (unexpected) {
      const error = exception instanceof Error ? exception : new Error(String(exception));
      this.logger.event('error', {
        msg: 'unhandled error',
        requestId,
        method: request.method,
        path: pathOnly(request.originalUrl ?? request.url ?? ''),
        error: error.name,
        detail: oneLine(error.message),
        stack: error.stack,
      });
    }
    if (response.headersSent) {
      // A streaming response (SSE) already sent its status: all we can do is end it.
      response.end();
      return;
    }
    if (body.statusCode === 401) response.setHeader('WWW-Authenticate', 'Bearer realm="ausline", ApiKey realm="ausline"');
    response.setHeader('Cache-Control', 'no-store');
    response.status(body.statusCode).json(body);
  }
}

/** The path without the query string: query strings never go to logs. */
export function pathOnly(url: string): string {
  const q = url.indexOf('?');
  return q === -1 ? url : url.slice(0, q);
}
