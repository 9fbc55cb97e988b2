/**
 * Shared setup of the ingest / deviation API tests: the API on its own database and queue prefix
 * (F2's startTestApi), signed-in people of every role, an invented austempering line (F3's
 * seedPlant: furnace zone1/zone2, bath tc1/tc2/agitator, an ADI heat, a spec with an approved
 * version), and controller/lab keys.
 */
import { randomBytes } from 'node:crypto';
import type { ApiConfig } from '../apps/api/src/app-config.js';
import { createApiKeyFor, createUserWithSession, type TestKey, type TestUser } from '../apps/api/test/support/principals.js';
import { startTestApi, type TestApi } from '../apps/api/test/support/test-api.js';
import { seedPlant, type SeededPlant } from './fixtures/austempering-plant.js';

export interface Reply<T = any> {
  status: number;
  body: T;
  headers: Headers;
}

export interface Http {
  get<T = any>(path: string, headers?: Record<string, string>): Promise<Reply<T>>;
  post<T = any>(path: string, body: unknown, headers?: Record<string, string>): Promise<Reply<T>>;
  postText<T = any>(path: string, text: string, headers?: Record<string, string>): Promise<Reply<T>>;
}

export function httpClient(baseUrl: string): Http {
  const send = async <T>(method: string, path: string, body: string | undefined, headers: Record<string, string>): Promise<Reply<T>> => {
    const res = await fetch(`${baseUrl}${path}`, { method, headers, ...(body !== undefined ? { body } : {}) });
    const text = await res.text();
    let parsed: unknown = text;
    try {
      parsed = text === '' ? null : JSON.parse(text);
    } catch {
      // not JSON: keep the text
    }
    return { status: res.status, body: parsed as T, headers: res.headers };
  };
  return {
    get: (path, headers = {}) => send('GET', path, undefined, headers),
    post: (path, body, headers = {}) => send('POST', path, JSON.stringify(body), { 'content-type': 'application/json', ...headers }),
    postText: (path, text, headers = {}) => send('POST', path, text, { 'content-type': 'text/csv', ...headers }),
  };
}

export interface IngestWorld extends TestApi {
  http: Http;
  plant: SeededPlant;
  admin: TestUser;
  quality: TestUser;
  metallurgist: TestUser;
  /** Scoped to the line's furnace. */
  furnaceKey: TestKey;
  /** Scoped to the line's bath. */
  bathKey: TestKey;
  labKey: TestKey;
}

export async function startIngestWorld(label: string, overrides: Partial<ApiConfig> = {}): Promise<IngestWorld> {
  const testApi = await startTestApi(label, overrides);
  const { api, db } = testApi;
  const plant = await seedPlant(db.prisma);
  const [admin, quality, metallurgist, furnaceKey, bathKey, labKey] = await Promise.all([
    createUserWithSession(api.app, { roles: ['ADMIN'] }),
    createUserWithSession(api.app, { roles: ['QUALITY'], displayName: 'Dana Whitcombe (Quality)' }),
    createUserWithSession(api.app, { roles: ['METALLURGIST'] }),
    createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.furnaceId] }),
    createApiKeyFor(api.app, { scope: 'EQUIPMENT', equipmentIds: [plant.bathId] }),
    createApiKeyFor(api.app, { scope: 'LAB' }),
  ]);
  return { ...testApi, http: httpClient(api.url), plant, admin, quality, metallurgist, furnaceKey, bathKey, labKey };
}

export function uniqueCode(prefix: string): string {
  return `${prefix}-${randomBytes(3).toString('hex')}`;
}

/** A batch of the seeded plant, created through the API by the admin. */
export async function createBatchViaApi(world: IngestWorld, code = uniqueCode('LOAD')): Promise<{ id: string; code: string }> {
  const heat = await world.db.prisma.heat.findUniqueOrThrow({ where: { id: world.plant.heatId } });
  const reply = await world.http.post(
    '/v1/batches',
    { code, lineId: world.plant.lineId, heatNumber: heat.heatNumber, productSpecId: world.plant.specId, partCount: 48, weightKg: 420, sectionShape: 'CYLINDER', sectionSizeMm: 25 },
    world.admin.headers,
  );
  if (reply.status !== 201) throw new Error(`batch not created: ${reply.status} ${JSON.stringify(reply.body)}`);
  return { id: reply.body.batch.id, code };
}

/** Posts a load event with the key of the equipment that reports it. */
export function postEvent(world: IngestWorld, batchId: string, kind: string, at: string | number): Promise<Reply> {
  const furnaceStep = kind === 'CHARGED' || kind === 'OUT_OF_FURNACE';
  return world.http.post(
    `/v1/batches/${batchId}/events`,
    { kind, at, equipmentId: furnaceStep ? world.plant.furnaceId : world.plant.bathId },
    (furnaceStep ? world.furnaceKey : world.bathKey).headers,
  );
}

export async function countSamples(world: IngestWorld): Promise<number> {
  return world.db.prisma.sample.count();
}

/** One server-sent event as read off the wire; comments (heartbeats) have `comment` set instead. */
export interface SseMessage {
  id?: string;
  event?: string;
  data?: string;
  comment?: string;
}

export interface EventStream {
  status: number;
  headers: Headers;
  /** Everything received so far, in order. */
  messages: SseMessage[];
  /** Resolves with the first message (already received or later) that satisfies `predicate`. */
  waitFor(predicate: (m: SseMessage) => boolean, timeoutMs?: number): Promise<SseMessage>;
  close(): void;
}

/** Opens GET `url` as an event stream with fetch and parses it as it arrives (no EventSource in Node 20). */
export async function openEventStream(url: string, headers: Record<string, string> = {}): Promise<EventStream> {
  const controller = new AbortController();
  const res = await fetch(url, { headers: { accept: 'text/event-stream', ...headers }, signal: controller.signal });
  const messages: SseMessage[] = [];
  const waiters: Array<{ predicate: (m: SseMessage) => boolean; resolve: (m: SseMessage) => void }> = [];
  const deliver = (m: SseMessage): void => {
    messages.push(m);
    for (const w of [...waiters]) {
      if (w.predicate(m)) {
        waiters.splice(waiters.indexOf(w), 1);
        w.resolve(m);
      }
    }
  };
  if (res.ok && res.body) {
    const reader = res.body.pipeThrough(new TextDecoderStream()).getReader();
    let buffer = '';
    void (async () => {
      try {
        for (;;) {
          const { value, done } = await reader.read();
          if (done) break;
          buffer += value;
          let end: number;
          while ((end = buffer.indexOf('\n\n')) !== -1) {
            const block = buffer.slice(0, end);
            buffer = buffer.slice(end + 2);
            const message: SseMessage = {};
            for (const line of block.split('\n')) {
              if (line.startsWith(':')) message.comment = line.slice(1).trim();
              else if (line.startsWith('id: ')) message.id = line.slice(4);
              else if (line.startsWith('event: ')) message.event = line.slice(7);
              else if (line.startsWith('data: ')) message.data = (message.data === undefined ? '' : `${message.data}\n`) + line.slice(6);
            }
            deliver(message);
          }
        }
      } catch {
        // aborted by close()
      }
    })();
  }
  return {
    status: res.status,
    headers: res.headers,
    messages,
    waitFor(predicate, timeoutMs = 5_000) {
      const found = messages.find(predicate);
      if (found) return Promise.resolve(found);
      return new Promise((resolve, reject) => {
        const waiter = { predicate, resolve: (m: SseMessage) => (clearTimeout(timer), resolve(m)) };
        const timer = setTimeout(() => {
          waiters.splice(waiters.indexOf(waiter), 1);
          reject(new Error(`no matching server-sent event within ${timeoutMs} ms; got ${JSON.stringify(messages)}`));
        }, timeoutMs);
        waiters.push(waiter);
      });
    },
    close() {
      controller.abort();
    },
  };
}
