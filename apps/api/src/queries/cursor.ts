import { badRequest } from '../http/errors.js';

/**
 * Keyset paging cursors: the (time, id) of the last row of a page, as opaque base64url text. Lists
 * are ordered newest first by (time desc, id desc); the next page holds the rows strictly after the
 * cursor in that order, so rows inserted meanwhile never shift or repeat a page.
 */
export interface Cursor {
  at: Date;
  id: string;
}

export function encodeCursor(at: Date, id: string): string {
  return Buffer.from(JSON.stringify([at.toISOString(), id]), 'utf8').toString('base64url');
}

export function decodeCursor(text: string, path = 'query.cursor'): Cursor {
  try {
    const parsed: unknown = JSON.parse(Buffer.from(text, 'base64url').toString('utf8'));
    if (Array.isArray(parsed) && parsed.length === 2 && typeof parsed[0] === 'string' && typeof parsed[1] === 'string') {
      const at = new Date(parsed[0]);
      if (!Number.isNaN(at.getTime()) && /^[0-9a-f-]{36}$/i.test(parsed[1])) return { at, id: parsed[1] };
    }
  } catch {
    // fall through to the 400
  }
  throw badRequest(`Invalid query: ${path}: not a cursor from a previous page`, [{ path, message: 'not a cursor from a previous page' }]);
}
