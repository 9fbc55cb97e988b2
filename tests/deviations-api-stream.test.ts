/**
 * GET /v1/stream: server-sent events relayed from the Redis channel `${QUEUE_PREFIX}:events`, for
 * signed-in users (header or ?token= for EventSource), with heartbeats and per-line/batch filters.
 * Deviation actions taken through the API are published there too.
 */
import { Redis } from 'ioredis';
import { afterAll, describe, expect, it } from 'vitest';
import type { LiveEvent } from '@ausline/contracts';
import type { ApiConfig } from '../apps/api/src/app-config.js';
import { LiveEventsHub } from '../apps/api/src/stream/live-events.hub.js';
import { DeviationRepository } from '@ausline/db';
import { createBatch } from './fixtures/austempering-plant.js';
import { TEST_REDIS_URL } from './support/env.js';
import { openEventStream, startIngestWorld, type EventStream } from './ingest-fixtures.js';

const world = await startIngestWorld('deviations-stream', { STREAM_HEARTBEAT_S: 1 } as unknown as Partial<ApiConfig>);
const { metallurgist, quality, plant } = world;
const streamUrl = `${world.api.url}/v1/stream`;
const channel = `${world.config.QUEUE_PREFIX}:events`;
const publisher = new Redis(TEST_REDIS_URL, { maxRetriesPerRequest: 1 });
await world.api.app.get(LiveEventsHub).ready();

const streams: EventStream[] = [];
afterAll(() => {
  for (const s of streams) s.close();
  publisher.disconnect();
});
async function open(url: string, headers: Record<string, string> = {}): Promise<EventStream> {
  const stream = await openEventStream(url, headers);
  streams.push(stream);
  return stream;
}

function batchUpdated(batchId: string, lineId: string): LiveEvent {
  return { type: 'batch.updated', batchId, lineId, at: new Date().toISOString() };
}

describe('GET /v1/stream', () => {
  it('refuses anonymous callers and bad tokens with 401, and equipment keys with 403', async () => {
    expect((await open(streamUrl)).status).toBe(401);
    expect((await open(`${streamUrl}?token=not-a-session`)).status).toBe(401);
    expect((await open(streamUrl, world.bathKey.headers)).status).toBe(403);
  });

  it('relays published events to a signed-in user, with ids, types and heartbeats', async () => {
    const stream = await open(streamUrl, metallurgist.headers);
    expect(stream.status).toBe(200);
    expect(stream.headers.get('content-type')).toMatch(/^text\/event-stream/);
    await stream.waitFor((m) => m.comment?.startsWith('connected') === true);

    const event = batchUpdated(crypto.randomUUID(), plant.lineId);
    await publisher.publish(channel, JSON.stringify(event));
    const received = await stream.waitFor((m) => m.event === 'batch.updated');
    expect(JSON.parse(received.data!)).toEqual(event);
    expect(Number(received.id)).toBeGreaterThan(0);

    // STREAM_HEARTBEAT_S = 1 in this file.
    await stream.waitFor((m) => m.comment?.startsWith('heartbeat') === true, 3_000);
  });

  it('accepts the session token as ?token= (EventSource cannot set headers)', async () => {
    const stream = await open(`${streamUrl}?token=${encodeURIComponent(quality.token)}`);
    expect(stream.status).toBe(200);
    await stream.waitFor((m) => m.comment?.startsWith('connected') === true);
    const batchId = crypto.randomUUID();
    const event = batchUpdated(batchId, plant.lineId);
    await publisher.publish(channel, JSON.stringify(event));
    expect(JSON.parse((await stream.waitFor((m) => m.event === 'batch.updated' && m.data!.includes(batchId))).data!)).toEqual(event);
  });

  it('filters by line and batch, and drops messages that are not live events', async () => {
    const otherLine = crypto.randomUUID();
    const byLine = await open(`${streamUrl}?lineId=${plant.lineId}`, metallurgist.headers);
    const batchId = crypto.randomUUID();
    const byBatch = await open(`${streamUrl}?batchId=${batchId}`, metallurgist.headers);
    await byLine.waitFor((m) => m.comment?.startsWith('connected') === true);
    await byBatch.waitFor((m) => m.comment?.startsWith('connected') === true);

    await publisher.publish(channel, 'not json');
    await publisher.publish(channel, JSON.stringify({ type: 'batch.updated', batchId: 'x' }));
    await publisher.publish(channel, JSON.stringify(batchUpdated(crypto.randomUUID(), otherLine)));
    const mine = batchUpdated(batchId, plant.lineId);
    await publisher.publish(channel, JSON.stringify(mine));

    const lineEvent = await byLine.waitFor((m) => m.event !== undefined);
    expect(JSON.parse(lineEvent.data!)).toEqual(mine);
    const batchEvent = await byBatch.waitFor((m) => m.event !== undefined);
    expect(JSON.parse(batchEvent.data!)).toEqual(mine);
    // Nothing else arrived on the line stream: the other line's event and the two bad messages were not relayed.
    expect(byLine.messages.filter((m) => m.event !== undefined)).toHaveLength(1);
    expect((await open(`${streamUrl}?lineId=nope`, metallurgist.headers)).status).toBe(400);
  });

  it('publishes deviation.changed when a person acts on a deviation', async () => {
    const batch = await createBatch(world.db.prisma, plant);
    const change = await new DeviationRepository(world.db.prisma).openOrRefresh(
      { rule: 'hold-min', severity: 'MAJOR', dedupKey: `${batch.id}:hold-min`, channelId: null, message: 'hold 41 min < 60 min', details: {} },
      { batchId: batch.id, lineId: plant.lineId, productSpecId: plant.specId },
    );
    const stream = await open(`${streamUrl}?batchId=${batch.id}`, quality.headers);
    await stream.waitFor((m) => m.comment?.startsWith('connected') === true);
    const ack = await world.http.post(`/v1/deviations/${change!.deviationId}/acknowledge`, {}, metallurgist.headers);
    expect(ack.status).toBe(200);
    const event = await stream.waitFor((m) => m.event === 'deviation.changed');
    expect(JSON.parse(event.data!)).toMatchObject({ deviationId: change!.deviationId, batchId: batch.id, status: 'ACKNOWLEDGED', rule: 'hold-min' });
  });
});
