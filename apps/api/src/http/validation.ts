import { type ArgumentMetadata, Injectable, type PipeTransform } from '@nestjs/common';
import { z } from 'zod';
import { badRequest, issuesFromZod, MAX_LISTED_ISSUES, summarizeIssues } from './errors.js';
import { unsafeInputIssues } from './input-safety.js';

/**
 * Validation at the HTTP edge. Controllers take `@Body() body: unknown` and call
 *
 *   const input = parseBody(CreateLineRequest, body);   // typed, or throws the 400
 *
 * The 400 lists every issue with its field path ('samples.3.value') and what is wrong; the one-line
 * message names the first. Nothing has been written when it throws.
 */
export function parseBody<S extends z.ZodType>(schema: S, body: unknown): z.output<S> {
  return parseWith(schema, body, '', 'request body');
}

/** Same for the query string; issue paths start with 'query.'. */
export function parseQuery<S extends z.ZodType>(schema: S, query: unknown): z.output<S> {
  return parseWith(schema, query ?? {}, 'query', 'query');
}

/** Same for route parameters; issue paths start with 'params.'. */
export function parseParams<S extends z.ZodType>(schema: S, params: unknown): z.output<S> {
  return parseWith(schema, params ?? {}, 'params', 'route parameters');
}

function parseWith<S extends z.ZodType>(schema: S, value: unknown, root: string, what: string): z.output<S> {
  // Text the database cannot store (U+0000, lone surrogates), '__proto__' keys, absurd nesting: refused
  // before the schema, whatever it says (a query string reaches Prisma only through here).
  const unsafe = unsafeInputIssues(value, root);
  const result = schema.safeParse(value);
  if (result.success && unsafe.length === 0) return result.data;
  const issues = [...unsafe, ...(result.success ? [] : issuesFromZod(result.error, root))];
  const message = summarizeIssues(what, issues) + (issues.length > MAX_LISTED_ISSUES ? ` — first ${MAX_LISTED_ISSUES} listed` : '');
  throw badRequest(message, issues);
}

const Uuid = z.uuid('not a UUID');

/**
 * `@Param('id', UuidParam) id: string` — a 400 naming 'params.id' instead of a database error when the
 * id is not a UUID. (Guards run before pipes, so unauthenticated callers still get 401/403 first.)
 */
@Injectable()
export class UuidParam implements PipeTransform<unknown, string> {
  transform(value: unknown, metadata: ArgumentMetadata): string {
    const result = Uuid.safeParse(value);
    if (result.success) return result.data;
    const path = `params.${metadata.data ?? 'id'}`;
    throw badRequest(`Invalid route parameters: ${path}: not a UUID`, [{ path, message: 'not a UUID' }]);
  }
}
