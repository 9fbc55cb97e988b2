/**
 * What a person is told when an API call fails: the dashboard's client against a plain HTTP server that answers
 * with the API's own error bodies (apps/api toErrorBody, so the shape cannot drift), and against a port where
 * nothing listens.
 */
import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { conflict, forbidden, notFound, toErrorBody, unauthorized, unprocessable } from '../../../api/src/http/errors.js';
import { parseBody } from '../../../api/src/http/validation.js';
import { LabResultInput } from '@ausline/contracts';
import { ApiClient, ApiError, describeError } from './client.js';

/** The API's answer for each path: a real validation failure, the API's error helpers, a crash. */
function answer(path: string): unknown {
  switch (path) {
    case '/400':
      return parseBody(LabResultInput, { kind: 'HARDNESS', scale: 'HV', testStandard: 'ISO 6507-1', readings: [488, 'x'], externalRef: 'LAB-1' });
    case '/401':
      return unauthorized('The session has expired');
    case '/403':
      return forbidden('Dispositions need the QUALITY role');
    case '/404':
      return notFound('Batch 5f0c… does not exist');
    case '/409':
      return conflict('Lab result LAB-1 (HARDNESS) is already recorded with other values', [{ path: 'readings', message: 'stored [488], sent [490]' }]);
    case '/422':
      return unprocessable('Event refused: OUT_OF_BATH before INTO_BATH', [{ path: 'at', message: 'before the INTO_BATH event' }]);
    default:
      return new Error('database connection lost');
  }
}

let server: Server;
let base = '';
beforeAll(async () => {
  server = createServer((req, res) => {
    let thrown: unknown;
    try {
      thrown = answer(req.url ?? '');
    } catch (error) {
      thrown = error;
    }
    const { body } = toErrorBody(thrown);
    res.writeHead(body.statusCode, { 'content-type': 'application/json', 'x-request-id': 'req-42' });
    res.end(JSON.stringify(body));
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});
afterAll(() => new Promise<void>((resolve) => server.close(() => resolve())));

async function failure(client: ApiClient, method: 'GET' | 'POST', path: string): Promise<ApiError> {
  const error = await client.request(method, path, method === 'POST' ? {} : undefined).then(() => null, (e: unknown) => e);
  expect(error).toBeInstanceOf(ApiError);
  return error as ApiError;
}

describe('describeError', () => {
  it('400: says the input was refused, names the field path and that nothing changed', async () => {
    const d = describeError(await failure(new ApiClient(base), 'POST', '/400'), 'Saving the lab result');
    expect(d.title).toBe('Saving the lab result was refused: check the input');
    expect(d.detail).toContain('Nothing was changed.');
    expect(d.issues.map((i) => i.path)).toContain('readings.1');
    expect(d.issues.find((i) => i.path === 'readings.1')!.message).toMatch(/number/);
  });

  it('401: signed out, sign in again; and the client ends the session it held', async () => {
    const client = new ApiClient(base);
    client.setToken('expired');
    let ended: ApiError | null = null;
    client.onSessionEnded = (e) => (ended = e);
    const d = describeError(await failure(client, 'GET', '/401'), 'Loading the board');
    expect(d).toMatchObject({ title: 'Signed out', detail: 'The session has expired. Sign in again to continue.', issues: [] });
    expect(ended).not.toBeNull();
  });

  it('403: not allowed for you, with the API\u2019s reason', async () => {
    const d = describeError(await failure(new ApiClient(base), 'POST', '/403'), 'Saving the disposition');
    expect(d.title).toBe('Saving the disposition is not allowed for you');
    expect(d.detail).toBe('Dispositions need the QUALITY role. Nothing was changed.');
  });

  it('404: not found, maybe removed or a wrong link (a read says nothing about changes)', async () => {
    const d = describeError(await failure(new ApiClient(base), 'GET', '/404'), 'Loading the load');
    expect(d.title).toBe('Loading the load failed: not found');
    expect(d.detail).toContain('It may have been removed, or the link is wrong.');
    expect(d.detail).not.toContain('Nothing was changed');
  });

  it('409: conflicts with the current state, reload; keeps the API\u2019s issues', async () => {
    const d = describeError(await failure(new ApiClient(base), 'POST', '/409'), 'Saving the lab result');
    expect(d.title).toBe('Saving the lab result conflicts with the current state');
    expect(d.detail).toContain('reload and look again. Nothing was changed.');
    expect(d.issues).toEqual([{ path: 'readings', message: 'stored [488], sent [490]' }]);
  });

  it('422: refused with the field the API named', async () => {
    const d = describeError(await failure(new ApiClient(base), 'POST', '/422'), 'Posting the event');
    expect(d.title).toBe('Posting the event was refused: check the input');
    expect(d.detail).toBe('Event refused: OUT_OF_BATH before INTO_BATH. Nothing was changed.');
    expect(d.issues).toEqual([{ path: 'at', message: 'before the INTO_BATH event' }]);
  });

  it('5xx: server error with its status and request id; a write may have been saved, look first', async () => {
    const error = await failure(new ApiClient(base), 'POST', '/500');
    expect(error.status).toBe(500);
    const d = describeError(error, 'Saving the disposition');
    expect(d.title).toBe('Saving the disposition failed: server error (500)');
    expect(d.detail).toContain('(request req-42)');
    expect(d.detail).toContain('Check whether the change was saved before repeating it.');
  });

  it('network failure: no connection, check the server; a write may or may not have been saved', async () => {
    const closed = createServer();
    await new Promise<void>((resolve) => closed.listen(0, '127.0.0.1', resolve));
    const port = (closed.address() as AddressInfo).port;
    await new Promise<void>((resolve) => closed.close(() => resolve()));
    const error = await failure(new ApiClient(`http://127.0.0.1:${port}`), 'POST', '/anything');
    expect(error.kind).toBe('network');
    const d = describeError(error, 'Saving the disposition');
    expect(d.title).toBe('Saving the disposition failed: no connection');
    expect(d.detail).toContain('could not be reached');
    expect(d.detail).toContain('The change may not have been saved: look before repeating it.');
    const read = await failure(new ApiClient(`http://127.0.0.1:${port}`), 'GET', '/anything');
    expect(describeError(read, 'Loading the board').detail).not.toContain('may not have been saved');
  });

  it('anything else is an unexpected dashboard problem, with its message', () => {
    const d = describeError(new TypeError('x is undefined'), 'Drawing the chart');
    expect(d.title).toBe('Drawing the chart failed');
    expect(d.detail).toContain('Unexpected problem in the dashboard: x is undefined.');
  });
});
