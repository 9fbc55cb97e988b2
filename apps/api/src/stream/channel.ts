/**
 * The Redis pub/sub channel of live events: `${QUEUE_PREFIX}:events` (API-CONTRACTS.md "Queue": the
 * worker publishes there, every API instance relays it). With the default prefix 'ausline' this is
 * EVENTS_CHANNEL of libs/contracts; tests get their own prefix and so their own channel.
 */
export function liveEventsChannel(queuePrefix: string): string {
  return `${queuePrefix}:events`;
}
