import { z } from 'zod';

/**
 * Live events published by the worker on Redis pub/sub and relayed by every API instance to
 * dashboards over server-sent events (GET /v1/stream).
 */
export const EVENTS_CHANNEL = 'ausline:events';

export const LiveEvent = z.discriminatedUnion('type', [
  z.object({
    type: z.literal('batch.updated'),
    batchId: z.uuid(),
    lineId: z.uuid(),
    at: z.iso.datetime(),
  }),
  z.object({
    type: z.literal('deviation.changed'),
    deviationId: z.uuid(),
    batchId: z.uuid().nullable(),
    lineId: z.uuid().nullable(),
    rule: z.string(),
    status: z.string(),
    at: z.iso.datetime(),
  }),
]);
export type LiveEvent = z.infer<typeof LiveEvent>;

/** GET /v1/stream: which live events a client wants. */
export const StreamQuery = z.strictObject({
  /** Session token for clients that cannot set headers (EventSource); see the api's StreamTokenMiddleware. */
  token: z.string().optional(),
  lineId: z.uuid('not a UUID').optional(),
  batchId: z.uuid('not a UUID').optional(),
});
export type StreamQuery = z.infer<typeof StreamQuery>;
