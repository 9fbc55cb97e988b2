import type { IncomingMessage, ServerResponse } from 'node:http';
import { Controller, Get, Inject, Query, Req, Res, type BeforeApplicationShutdown } from '@nestjs/common';
import { ApiOkResponse, ApiOperation, ApiProduces, ApiQuery, ApiTags } from '@nestjs/swagger';
import { StreamQuery, type LiveEvent } from '@ausline/contracts';
import { API_CONFIG, type ApiConfig } from '../app-config.js';
import { Access, ANY_ROLE } from '../auth/access.js';
import { ApiErrors } from '../http/openapi.js';
import { parseQuery } from '../http/validation.js';
import { ingestSettingsFrom } from '../ingest/ingest-settings.js';
import { LiveEventsHub } from './live-events.hub.js';

/** Tells the browser how long to wait before reconnecting a dropped stream. */
const RECONNECT_MS = 3_000;

function matches(event: LiveEvent, filter: { lineId?: string; batchId?: string }): boolean {
  if (filter.lineId && event.lineId !== filter.lineId) return false;
  if (filter.batchId && event.batchId !== filter.batchId) return false;
  return true;
}

/**
 * GET /v1/stream: server-sent events relaying the live events of every API instance's Redis
 * subscription (batch.updated, deviation.changed). Each event is sent as
 *
 *   id: <per-instance sequence>
 *   event: <type>
 *   data: <LiveEvent JSON>
 *
 * with a comment line (`: heartbeat <time>`) every STREAM_HEARTBEAT_S seconds so proxies keep the
 * connection open and clients notice a dead one. The stream carries notifications only: after a
 * reconnect a client re-reads what it shows through the REST endpoints.
 */
@ApiTags('stream')
@Controller()
export class StreamController implements BeforeApplicationShutdown {
  private readonly heartbeatMs: number;
  private readonly open = new Set<ServerResponse>();

  constructor(
    private readonly hub: LiveEventsHub,
    @Inject(API_CONFIG) config: ApiConfig,
  ) {
    this.heartbeatMs = ingestSettingsFrom(config).streamHeartbeatMs;
  }

  @Get('stream')
  @Access({ roles: ANY_ROLE })
  @ApiOperation({
    summary: 'Live events (server-sent events): batch.updated and deviation.changed, optionally only for one line or batch',
    description:
      'Signed-in users only. Send `Authorization: Bearer <token>`, or, from a browser EventSource (which cannot set headers), ' +
      '`?token=<session token>`. Heartbeat comments every STREAM_HEARTBEAT_S seconds (default 15). Events carry ids per API ' +
      'instance; there is no replay after a reconnect, so re-read the lists then.',
  })
  @ApiProduces('text/event-stream')
  @ApiQuery({ name: 'token', required: false, description: 'Session token, for EventSource clients' })
  @ApiQuery({ name: 'lineId', required: false })
  @ApiQuery({ name: 'batchId', required: false })
  @ApiOkResponse({ description: 'An event stream (text/event-stream)' })
  @ApiErrors(400)
  stream(@Query() query: unknown, @Req() req: IncomingMessage, @Res() res: ServerResponse): void {
    const { lineId, batchId } = parseQuery(StreamQuery, query);
    const filter = { ...(lineId ? { lineId } : {}), ...(batchId ? { batchId } : {}) };

    res.writeHead(200, {
      'Content-Type': 'text/event-stream; charset=utf-8',
      'Cache-Control': 'no-cache, no-store, no-transform',
      Connection: 'keep-alive',
      // Reverse proxies (nginx) must pass events through at once, not buffer them.
      'X-Accel-Buffering': 'no',
    });
    res.write(`retry: ${RECONNECT_MS}\n: connected ${new Date().toISOString()}\n\n`);
    this.open.add(res);

    const subscription = this.hub.events$.subscribe(({ seq, event }) => {
      if (!matches(event, filter)) return;
      res.write(`id: ${seq}\nevent: ${event.type}\ndata: ${JSON.stringify(event)}\n\n`);
    });
    const heartbeat = setInterval(() => res.write(`: heartbeat ${new Date().toISOString()}\n\n`), this.heartbeatMs);
    heartbeat.unref();

    const close = (): void => {
      clearInterval(heartbeat);
      subscription.unsubscribe();
      this.open.delete(res);
    };
    req.on('close', close);
    res.on('close', close);
  }

  /** Ends open streams so the server can close (clients reconnect to another instance). */
  beforeApplicationShutdown(): void {
    for (const res of this.open) res.end();
    this.open.clear();
  }
}
