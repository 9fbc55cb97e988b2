import { Module, RequestMethod, type MiddlewareConsumer, type NestModule } from '@nestjs/common';
import { LiveEventsHub } from './live-events.hub.js';
import { LiveEventsPublisher } from './live-events.publisher.js';
import { StreamController } from './stream.controller.js';
import { streamTokenMiddleware } from './stream-token.middleware.js';

/** GET /v1/stream (server-sent events) and the API's own live-event publisher. */
@Module({
  controllers: [StreamController],
  providers: [LiveEventsHub, LiveEventsPublisher],
  exports: [LiveEventsHub, LiveEventsPublisher],
})
export class StreamModule implements NestModule {
  configure(consumer: MiddlewareConsumer): void {
    consumer.apply(streamTokenMiddleware).forRoutes({ path: 'stream', method: RequestMethod.GET, version: '1' });
  }
}
