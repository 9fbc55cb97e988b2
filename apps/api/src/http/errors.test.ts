import { BadRequestException, HttpException, NotFoundException } from '@nestjs/common';
import { describe, expect, it } from 'vitest';
import { z } from 'zod';
import { conflict, issuesFromZod, MAX_LISTED_ISSUES, toErrorBody } from './errors.js';
import { parseBody, parseQuery } from './validation.js';

describe('toErrorBody', () => {
  it('keeps ApiError status, message and issues', () => {
    const { body, unexpected } = toErrorBody(conflict('exists', [{ path: 'code', message: 'already in use' }]));
    expect(body).toEqual({ statusCode: 409, error: 'Conflict', message: 'exists', issues: [{ path: 'code', message: 'already in use' }] });
    expect(unexpected).toBe(false);
  });

  it("maps Nest's HttpExceptions into the shape", () => {
    expect(toErrorBody(new NotFoundException('Cannot GET /x')).body).toMatchObject({ statusCode: 404, error: 'Not Found', message: 'Cannot GET /x' });
    expect(toErrorBody(new HttpException('teapot', 418)).body).toMatchObject({ statusCode: 418, message: 'teapot' });
  });

  it('explains body-parser failures that Nest wraps', () => {
    const parse = Object.assign(new SyntaxError('Unexpected end of JSON input'), { type: 'entity.parse.failed', status: 400 });
    expect(toErrorBody(new BadRequestException(parse.message, { cause: parse })).body).toMatchObject({
      statusCode: 400,
      message: 'Malformed JSON body: Unexpected end of JSON input',
    });
    const large = Object.assign(new Error('request entity too large'), { type: 'entity.too.large', status: 413, limit: 5 * 1024 * 1024, length: 6 * 1024 * 1024 });
    expect(toErrorBody(new HttpException(large.message, 413, { cause: large })).body.message).toBe(
      'Request body is larger than the limit of 5.0 MB (got 6.0 MB)',
    );
  });

  it('turns anything unknown into a 500 that reveals nothing', () => {
    const { body, unexpected } = toErrorBody(new Error('connect ECONNREFUSED 10.0.0.5:5432 password=hunter2'));
    expect(unexpected).toBe(true);
    expect(body.statusCode).toBe(500);
    expect(JSON.stringify(body)).not.toMatch(/ECONNREFUSED|hunter2|10\.0\.0\.5/);
    expect(toErrorBody('a string').body.statusCode).toBe(500);
    expect(toErrorBody(undefined).body.statusCode).toBe(500);
  });

  it('maps a Prisma unique violation that escaped a service to 409 (safety net)', () => {
    const error = Object.assign(new Error('Unique constraint failed on the fields: (`code`)'), { name: 'PrismaClientKnownRequestError', code: 'P2002' });
    expect(toErrorBody(error).body.statusCode).toBe(409);
    expect(toErrorBody(error).body.message).not.toContain('`code`');
  });

  it('lists at most MAX_LISTED_ISSUES issues', () => {
    const schema = z.object({ values: z.array(z.number()) });
    const result = schema.safeParse({ values: Array.from({ length: 150 }, () => 'x') });
    expect(result.success).toBe(false);
    const issues = issuesFromZod(result.error!);
    expect(issues).toHaveLength(150);
    const { body } = toErrorBody(result.error);
    expect(body.issues).toHaveLength(MAX_LISTED_ISSUES);
  });
});

describe('parseBody / parseQuery', () => {
  const Sample = z.strictObject({ samples: z.array(z.strictObject({ channel: z.string(), t: z.iso.datetime(), value: z.number() })) });

  it('returns typed data for valid input', () => {
    const input = { samples: [{ channel: 'tc1', t: '2026-12-01T10:00:00Z', value: 360.5 }] };
    expect(parseBody(Sample, input)).toEqual(input);
  });

  it('throws 400 with dotted paths into arrays, unknown fields by name, and a one-line message', () => {
    let error: unknown;
    try {
      parseBody(Sample, { samples: [{ channel: 'tc1', t: '2026-12-01T10:00:00Z', value: 1 }, { channel: 'tc1', t: 'yesterday', value: '360', unit: 'C' }] });
    } catch (e) {
      error = e;
    }
    const { body } = toErrorBody(error);
    expect(body.statusCode).toBe(400);
    expect(body.issues.map((i) => i.path).sort()).toEqual(['samples.1.t', 'samples.1.unit', 'samples.1.value']);
    expect(body.issues.find((i) => i.path === 'samples.1.unit')!.message).toBe('unknown field');
    expect(body.issues.find((i) => i.path === 'samples.1.value')!.message).toMatch(/expected number, received string/);
    expect(body.message).toMatch(/^Invalid request body: samples\.1\.\w+: .* \(and 2 more issues\)$/);
    expect(body.message).not.toContain('\n');
  });

  it('names the unknown key itself', () => {
    let error: unknown;
    try {
      parseBody(z.strictObject({ a: z.number() }), { a: 1, surprise: true });
    } catch (e) {
      error = e;
    }
    expect(toErrorBody(error).body.issues).toEqual([{ path: 'surprise', message: 'unknown field' }]);
  });

  it("prefixes query issues with 'query.' and names the root when the whole value is wrong", () => {
    let error: unknown;
    try {
      parseQuery(z.object({ limit: z.coerce.number().int().max(500) }), { limit: '9999' });
    } catch (e) {
      error = e;
    }
    expect(toErrorBody(error).body.issues[0]!.path).toBe('query.limit');
    try {
      parseBody(z.object({ a: z.number() }), undefined);
    } catch (e) {
      error = e;
    }
    expect(toErrorBody(error).body.issues).toEqual([{ path: 'body', message: expect.stringMatching(/expected object/) }]);
  });
});
