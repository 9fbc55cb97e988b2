/**
 * GET /v1/stream on every API instance (issue 2, item 9): two API processes' worth of apps against the
 * same Postgres and Redis (the same QUEUE_PREFIX, as two replicas behind a load balancer run), one event
 * published once on the Redis channel (as the worker publishes it), and a stream on each instance gets it.
 * Then a deviation acknowledged through one instance reaches the stream held open on the other.
 */
import { Redis } from 'ioredis';
import { afterAll, describe, expect, it } from 'vitest';
import type { LiveEvent } from '@ausline/contracts';
import { DeviationRepository } from '@ausline/db';
import { createApiApp } from '../apps/api/src/create-api-app.js';
import { LiveEventsHub } from '../apps/api/src/stream/live-events.hub.js';
import { createBatch } from './fixtures/austempering-plant.js';
import { TEST_REDIS_URL } from './support/env.js';
import { openEventStream, startIngestWorld, type EventStream } from './ingest-fixtures.js';

const world = await startIngestWorld('stream-two-instances');
const second = await createApiApp(world.config);
afterAll(() => second.close());
const instances = [world.api, second];
await Promise.all(instances.map((api) => api.app.get(LiveEventsHub).ready()));

const publisher = new Redis(TEST_REDIS_URL, { maxRetriesPerRequest: 1 });
const streams: EventStream[] = [];
afterAll(() => {
  for (const s of streams) s.close();
  publisher.disconnect();
});

/** A signed-in stream on each instance, connected. */
async function streamOnEach(): Promise<EventStream[]> {
  return Promise.all(
    instances.map(async (api) => {
      const stream = await openEventStream(`${api.url}/v1/stream`, world.metallurgist.headers);
      streams.push(stream);
      expect(stream.status).toBe(200);
      await stream.waitFor((m) => m.comment?.startsWith('connected') === true);
      return stream;
    }),
  );
}

describe('the live stream relay across API instances', () => {
  it('runs two distinct instances', () => {
    expect(world.api.url).not.toBe(second.url);
  });

  it('delivers one published event to a stream on each instance, once each', async () => {
    const [onFirst, onSecond] = await streamOnEach();
    const event: LiveEvent = { type: 'batch.updated', batchId: crypto.randomUUID(), lineId: world.plant.lineId, at: new Date().toISOString() };
    expect(await publisher.publish(`${world.config.QUEUE_PREFIX}:events`, JSON.stringify(event))).toBeGreaterThanOrEqual(2);

    for (const stream of [onFirst!, onSecond!]) {
      const received = await stream.waitFor((m) => m.event === 'batch.updated' && m.data!.includes(event.batchId));
      expect(JSON.parse(received.data!)).toEqual(event);
    }
    // A moment for a duplicate to show, then exactly one copy on each.
    await new Promise((resolve) => setTimeout(resolve, 300));
    for (const stream of [onFirst!, onSecond!]) {
      expect(stream.messages.filter((m) => m.data?.includes(event.batchId))).toHaveLength(1);
    }
  });

  it('relays a deviation acknowledged through one instance to the stream on the other', async () => {
    const [, onSecond] = await streamOnEach();
    const batch = await createBatch(world.db.prisma, world.plant);
    const change = await new DeviationRepository(world.db.prisma).openOrRefresh(
      { rule: 'hold-min', severity: 'MAJOR', dedupKey: `${batch.id}:hold-min`, channelId: null, message: 'hold 41 min < 60 min', details: {} },
      { batchId: batch.id, lineId: world.plant.lineId, productSpecId: world.plant.specId },
    );
    const ack = await world.http.post(`/v1/deviations/${change!.deviationId}/acknowledge`, {}, world.metallurgist.headers);
    expect(ack.status).toBe(200);
    const received = await onSecond!.waitFor((m) => m.event === 'deviation.changed' && m.data!.includes(change!.deviationId));
    expect(JSON.parse(received.data!)).toMatchObject({ type: 'deviation.changed', deviationId: change!.deviationId, batchId: batch.id, status: 'ACKNOWLEDGED' });
  });
});
