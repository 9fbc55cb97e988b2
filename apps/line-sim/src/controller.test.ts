import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterEach, describe, expect, it } from 'vitest';
import { Controller, type SampleRecord } from './controller.js';
import { classifyReply, parseRetryAfter } from './http.js';

/*
 * The controller's protocol handling against a scripted HTTP server: replies the real API gives only under
 * conditions a test cannot easily arrange (503 with Retry-After while overloaded, 413, 409 for a key still in
 * flight). The real API is exercised end to end in tests/demo-day.test.ts and tests/demo-outage.test.ts.
 * Status semantics: RFC 9110 (Retry-After §10.2.3), IETF draft-ietf-httpapi-idempotency-key-header-07 (409
 * while the first request with the key is in flight), as summarised in practice.md §5.4.
 */

interface Seen {
  path: string;
  key: string | undefined;
  body: { samples?: unknown[] } & Record<string, unknown>;
}

let server: Server | null = null;

async function serve(handler: (seen: Seen, n: number, res: ServerResponse) => void): Promise<{ url: string; seen: Seen[] }> {
  const seen: Seen[] = [];
  server = createServer((req: IncomingMessage, res: ServerResponse) => {
    let text = '';
    req.on('data', (c) => (text += c));
    req.on('end', () => {
      const entry = { path: req.url ?? '', key: req.headers['idempotency-key'] as string | undefined, body: text ? JSON.parse(text) : {} };
      seen.push(entry);
      handler(entry, seen.length, res);
    });
  });
  await new Promise<void>((resolve) => server!.listen(0, '127.0.0.1', resolve));
  return { url: `http://127.0.0.1:${(server!.address() as AddressInfo).port}`, seen };
}

afterEach(async () => {
  await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
  server = null;
});

const json = (res: ServerResponse, status: number, body: unknown, headers: Record<string, string> = {}) => {
  res.writeHead(status, { 'content-type': 'application/json', ...headers });
  res.end(JSON.stringify(body));
};

const samples = (n: number, equipmentId = 'e1'): SampleRecord[] => Array.from({ length: n }, (_, i) => ({ equipmentId, channel: 'tc1', tMs: 1_700_000_000_000 + i * 2000, value: 290 + i / 10 }));

function controller(url: string, extra: Partial<ConstructorParameters<typeof Controller>[0]> = {}) {
  return new Controller({ name: 'HV-L1', baseUrl: url, apiKey: 'k.secret', runId: 'run1', backoffBaseMs: 20, backoffCapMs: 100, random: () => 0.5, ...extra });
}

describe('Controller', () => {
  it('retries a 503 with the same key and body, waiting at least Retry-After, then counts the reply', async () => {
    const { url, seen } = await serve((s, n, res) => {
      if (n === 1) return json(res, 503, { message: 'busy' }, { 'retry-after': '1' });
      json(res, 200, { stored: s.body.samples!.length, duplicates: 0, conflicts: 0, rejected: 0, batchesQueued: 0 });
    });
    const c = controller(url);
    c.pushSamples(samples(5));
    const t0 = Date.now();
    c.start();
    await c.stop();
    expect(seen).toHaveLength(2);
    expect(seen[1]!.key).toBe(seen[0]!.key);
    expect(seen[1]!.body).toEqual(seen[0]!.body);
    expect(seen[0]!.key).toBe('"run1.HV-L1.1-5"');
    expect(Date.now() - t0).toBeGreaterThanOrEqual(1000);
    expect(c.report()).toMatchObject({ retries: 1, samplesAcked: 5, samplesStored: 5, pending: 0, rejected: 0 });
  });

  it('keeps retrying while the key is still in flight (409 naming the header), but drops a 422', async () => {
    const { url, seen } = await serve((s, n, res) => {
      if (s.path.endsWith('/events') && n === 1) return json(res, 409, { message: 'in flight', issues: [{ path: 'headers.Idempotency-Key', message: 'original request still in progress' }] });
      if (s.path.endsWith('/events')) return json(res, 201, { outcome: 'created' });
      json(res, 422, { message: 'Samples refused', issues: [{ path: 'samples.0.channel', message: 'unknown channel' }] });
    });
    const c = controller(url);
    const acked: string[] = [];
    c.pushRequest({ describe: 'CHARGED', prepare: () => ({ method: 'POST', path: '/v1/batches/b1/events', body: { kind: 'CHARGED' } }), onAck: () => acked.push('CHARGED') });
    c.pushSamples(samples(3));
    c.start();
    await c.stop();
    expect(seen.map((s) => s.path)).toEqual(['/v1/batches/b1/events', '/v1/batches/b1/events', '/v1/equipment/e1/samples']);
    expect(acked).toEqual(['CHARGED']);
    expect(c.report()).toMatchObject({ retries: 1, rejected: 3, samplesAcked: 0, pending: 0 });
  });

  it('halves a chunk the server finds too large (413) and sends the halves under new keys', async () => {
    const { url, seen } = await serve((s, _n, res) => {
      if (s.body.samples!.length > 4) return json(res, 413, { message: 'too large' });
      json(res, 200, { stored: s.body.samples!.length, duplicates: 0, conflicts: 0, rejected: 0, batchesQueued: 0 });
    });
    const c = controller(url, { maxChunk: 10 });
    c.pushSamples(samples(8));
    c.start();
    await c.stop();
    expect(seen.map((s) => s.body.samples!.length)).toEqual([8, 4, 4]);
    expect(new Set(seen.map((s) => s.key)).size).toBe(3);
    expect(c.report()).toMatchObject({ samplesAcked: 8, samplesStored: 8, rejected: 0 });
  });

  it('posts one request per piece of equipment and holds a record until its dependency is known', async () => {
    let batchId: string | null = null;
    const { url, seen } = await serve((s, _n, res) => {
      if (s.path === '/v1/batches') return json(res, 201, { batch: { id: 'b9' } });
      json(res, 200, { stored: s.body.samples?.length ?? 0, duplicates: 0, conflicts: 0, rejected: 0, batchesQueued: 0 });
    });
    const c = controller(url);
    c.pushSamples(samples(2, 'furnace'));
    c.pushSamples(samples(3, 'bath'));
    c.pushRequest({ describe: 'create', prepare: () => ({ method: 'POST', path: '/v1/batches', body: {} }), onAck: (r) => (batchId = (r.body as { batch: { id: string } }).batch.id) });
    c.pushGroup({
      describe: 'events',
      requests: ['CHARGED', 'OUT_OF_FURNACE'].map((kind) => ({ describe: kind, prepare: () => (batchId ? { method: 'POST' as const, path: `/v1/batches/${batchId}/events`, body: { kind } } : null) })),
    });
    c.start();
    await c.stop();
    expect(seen.map((s) => s.path)).toEqual(['/v1/equipment/furnace/samples', '/v1/equipment/bath/samples', '/v1/batches', '/v1/batches/b9/events', '/v1/batches/b9/events']);
    expect(seen.slice(3).map((s) => s.body.kind).sort()).toEqual(['CHARGED', 'OUT_OF_FURNACE']);
  });

  it('blocks the producer when full, or loses the oldest readings in drop-oldest mode', () => {
    const blocking = controller('http://127.0.0.1:9', { capacity: 5 });
    blocking.pushSamples(samples(5));
    expect(blocking.hasRoom(1)).toBe(false);
    const dropping = controller('http://127.0.0.1:9', { capacity: 5, overflow: 'drop-oldest' });
    dropping.pushSamples(samples(8));
    expect(dropping.report()).toMatchObject({ pending: 5, droppedOverflow: 3 });
  });
});

describe('reply classification', () => {
  it('retries what may succeed later and refuses what never will', () => {
    const r = (status: number, body: unknown = {}) => classifyReply({ status, body, retryAfterMs: null });
    expect([r(200), r(201), r(503), r(502), r(429), r(408), r(413), r(400), r(401), r(403), r(404), r(409), r(422)]).toEqual([
      'ok', 'ok', 'retry', 'retry', 'retry', 'retry', 'too-large', 'reject', 'reject', 'reject', 'reject', 'reject', 'reject',
    ]);
    expect(r(409, { issues: [{ path: 'headers.Idempotency-Key', message: 'original request still in progress' }] })).toBe('retry');
  });

  it('reads Retry-After as seconds or an HTTP date (RFC 9110 §10.2.3)', () => {
    expect(parseRetryAfter('7')).toBe(7000);
    expect(parseRetryAfter('Wed, 21 Oct 2015 07:28:10 GMT', Date.UTC(2015, 9, 21, 7, 28, 0))).toBe(10_000);
    expect(parseRetryAfter(null)).toBeNull();
  });
});
