import { describe, expect, it } from 'vitest';
import { z } from 'zod';
import { ApiError, issuesFromZod, toErrorBody } from './errors.js';
import { inputSafetyMiddleware, MAX_INPUT_DEPTH, unsafeInputIssues, unsafeTextIssues } from './input-safety.js';
import { parseBody, parseQuery } from './validation.js';

describe('unsafeInputIssues', () => {
  it('names every string or field name PostgreSQL cannot store as sent', () => {
    const body = JSON.parse('{"a":"ok","b":["x","y\\u0000"],"c":{"d\\u0000":1,"e":"\\ud800","f":"\\ud83d\\ude00"}}');
    expect(unsafeInputIssues(body)).toEqual([
      { path: 'b.1', message: 'contains a NUL character (U+0000), which cannot be stored' },
      { path: 'c.d\u0000', message: 'field name contains a NUL character (U+0000), which cannot be stored' },
      { path: 'c.e', message: 'contains a lone UTF-16 surrogate, which is not Unicode text' },
    ]);
  });

  it("refuses '__proto__' as a field name (JSON.parse makes it an own property; a plain assignment would not)", () => {
    const body = JSON.parse('{"chemistryWtPct":{"C":0.5,"__proto__":{"polluted":1}},"constructor":1}');
    expect(unsafeInputIssues(body)).toEqual([{ path: 'chemistryWtPct.__proto__', message: "'__proto__' is not allowed as a field name" }]);
  });

  it('stops at MAX_INPUT_DEPTH without recursion, however deep the value', () => {
    const deep = JSON.parse(`{"a":${'['.repeat(100_000)}${']'.repeat(100_000)}}`);
    const issues = unsafeInputIssues(deep);
    expect(issues).toHaveLength(1);
    expect(issues[0]!.message).toBe(`nested more than ${MAX_INPUT_DEPTH} levels deep`);
    expect(issues[0]!.path.startsWith('a.0.0.0')).toBe(true);
    // Exactly at the limit is fine.
    let ok: unknown = 1;
    for (let i = 0; i < MAX_INPUT_DEPTH; i++) ok = [ok];
    expect(unsafeInputIssues(ok)).toEqual([]);
  });

  it('prefixes the root and shows an empty field name as ""', () => {
    expect(unsafeInputIssues({ '': 'a\u0000' }, 'query')).toEqual([{ path: 'query.""', message: 'contains a NUL character (U+0000), which cannot be stored' }]);
  });

  it('reports text bodies by line and column', () => {
    expect(unsafeTextIssues('a,b\nc,d\u0000e\n')).toEqual([{ path: 'body', message: 'line 2, column 4: contains a NUL character (U+0000), which cannot be stored' }]);
    expect(unsafeTextIssues('a,b\r\n1,2\r\n')).toEqual([]);
  });
});

describe('parseBody / parseQuery refuse unsafe input even when the schema accepts it', () => {
  it('a record schema would drop "__proto__"; parseBody refuses it', () => {
    const schema = z.record(z.string(), z.unknown());
    const body = JSON.parse('{"__proto__":{"x":1}}');
    expect(() => parseBody(schema, body)).toThrow(ApiError);
    try {
      parseBody(schema, body);
    } catch (error) {
      expect((error as ApiError).issues).toEqual([{ path: '__proto__', message: "'__proto__' is not allowed as a field name" }]);
    }
  });

  it('a NUL in a query value is a 400 naming query.<name>', () => {
    expect(() => parseQuery(z.object({ code: z.string() }), { code: 'a\u0000' })).toThrow(/query\.code: contains a NUL/);
  });
});

describe('error replies stay short', () => {
  it('cuts long messages and issue texts that quote the input', () => {
    const huge = 'x'.repeat(100_000);
    const { body } = toErrorBody(new ApiError(400, `bad: ${huge}`, [{ path: huge, message: huge }]));
    expect(body.message.length).toBeLessThanOrEqual(500);
    expect(body.issues[0]!.path.length).toBeLessThanOrEqual(200);
    expect(body.issues[0]!.message.length).toBeLessThanOrEqual(300);
    expect(body.message.endsWith('…')).toBe(true);
  });

  it('an unknown empty field name shows as ""', () => {
    const result = z.strictObject({ a: z.number() }).safeParse({ a: 1, '': 2 });
    expect(issuesFromZod(result.error!)).toEqual([{ path: '""', message: 'unknown field' }]);
  });
});

describe('inputSafetyMiddleware', () => {
  const run = (req: object): unknown => {
    let passed: unknown = 'not called';
    inputSafetyMiddleware(req as never, {} as never, (error?: unknown) => (passed = error));
    return passed;
  };

  it('answers 415 naming the content type when a body came that no parser read', () => {
    const error = run({ headers: { 'content-length': '7', 'content-type': 'application/octet-stream' }, body: undefined }) as ApiError;
    expect(error).toBeInstanceOf(ApiError);
    expect(error.getStatus()).toBe(415);
    expect(error.issues).toEqual([{ path: 'headers.content-type', message: 'application/octet-stream is not read by this API' }]);
    expect((run({ headers: { 'transfer-encoding': 'chunked' }, body: undefined }) as ApiError).getStatus()).toBe(415);
  });

  it('lets requests without a body, and parsed bodies without problems, through', () => {
    expect(run({ headers: {}, body: undefined })).toBeUndefined();
    expect(run({ headers: { 'content-length': '0' }, body: undefined })).toBeUndefined();
    expect(run({ headers: { 'content-length': '9' }, body: { a: 'b' } })).toBeUndefined();
    expect(run({ headers: { 'content-length': '9' }, body: 'a,b\n1,2\n' })).toBeUndefined();
  });

  it('answers 400 for a parsed body with unsafe input', () => {
    const error = run({ headers: { 'content-length': '9' }, body: { a: 'x\u0000' } }) as ApiError;
    expect(error.getStatus()).toBe(400);
    expect(error.message).toBe('Invalid request body: a: contains a NUL character (U+0000), which cannot be stored');
  });
});

describe('database data exceptions that escape validation', () => {
  function prismaError(code: string, sqlState: string): Error {
    const error = new Error('Invalid `prisma.x.findMany()` invocation: Database error') as Error & { code: string; meta: unknown };
    error.name = 'PrismaClientKnownRequestError';
    error.code = code;
    error.meta = { modelName: 'Batch', driverAdapterError: { name: 'DriverAdapterError', cause: { originalCode: sqlState, kind: 'postgres' } } };
    return error;
  }

  it('answer 400 (a value the caller sent), never naming tables or columns', () => {
    for (const [code, state] of [['P2039', '22008'], ['P2039', '22021'], ['P2020', '22003']] as const) {
      const { body, unexpected } = toErrorBody(prismaError(code, state));
      expect(unexpected, state).toBe(false);
      expect(body.statusCode).toBe(400);
      expect(body.message).not.toMatch(/Batch|prisma/i);
    }
  });

  it('other database errors stay 500', () => {
    expect(toErrorBody(prismaError('P2039', '57P01')).body.statusCode).toBe(500);
  });
});
