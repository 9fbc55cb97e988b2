/**
 * Builds and starts the Ausline API in this process. main.ts uses it; so do integration tests:
 *
 *   import { createApiApp } from '../apps/api/src/create-api-app.js';
 *   import { createTestDatabase } from './support/database.js';
 *   import { testQueuePrefix } from './support/redis.js';
 *   import { testAppEnv } from './support/env.js';
 *   import { loadConfig } from '@ausline/contracts';
 *
 *   const db = await createTestDatabase();                           // per-file database, dropped afterAll
 *   const api = await createApiApp(loadConfig(testAppEnv({ databaseUrl: db.url, queuePrefix: testQueuePrefix('x') })));
 *   afterAll(() => api.close());
 *   const res = await fetch(`${api.url}/v1/lines`, { headers: { authorization: `Bearer ${token}` } });
 *
 * It listens on a random free port by default (options.port ?? 0) on 127.0.0.1 and returns the base URL.
 * For principals without going through HTTP login, see apps/api/test/support/principals.ts
 * (createUserWithSession, createApiKeyFor).
 */
import type { INestApplication } from '@nestjs/common';
import { VersioningType } from '@nestjs/common';
import { NestFactory } from '@nestjs/core';
import { ExpressAdapter, type NestExpressApplication } from '@nestjs/platform-express';
import type { AddressInfo } from 'node:net';
import { AppModule } from './app.module.js';
import type { ApiConfig } from './app-config.js';
import { ApiExceptionFilter } from './http/errors.js';
import { JsonLogger } from './http/logger.js';
import { setupOpenApi } from './http/openapi.js';
import { requestContextMiddleware } from './http/request-context.js';
import { inputSafetyMiddleware } from './http/input-safety.js';
import { loginThrottleMiddleware, rateLimitSettingsFrom, requestRateLimitMiddleware } from './http/rate-limit.js';
import { requestLogMiddleware } from './http/request-log.js';
import { corsOptions, securityHeadersMiddleware } from './http/security.js';

/** Largest accepted request body (10,000 samples of JSON are well under 1 MB). */
export const BODY_LIMIT_BYTES = 5 * 1024 * 1024;

export interface ApiAppOptions {
  /** Port to listen on; 0 (default) picks a free one. main.ts passes config.PORT. */
  port?: number;
  /** Interface to bind; default 127.0.0.1 (main.ts passes config.HOST ?? '0.0.0.0'). */
  host?: string;
  /** Logger to use; default a JsonLogger at config.LOG_LEVEL on stdout. */
  logger?: JsonLogger;
  /** Close on SIGTERM/SIGINT (main.ts: true; tests: false, they call close()). */
  shutdownHooks?: boolean;
}

export interface ApiHandle {
  app: INestApplication;
  /** Base URL without trailing slash, e.g. http://127.0.0.1:41234 */
  url: string;
  close(): Promise<void>;
}

/** The configured Nest application, initialised but not listening (used by createApiApp and route listings). */
export async function buildApiApp(config: ApiConfig, options: Pick<ApiAppOptions, 'logger' | 'shutdownHooks'> = {}): Promise<NestExpressApplication> {
  const logger = options.logger ?? new JsonLogger(config.LOG_LEVEL);
  const app = await NestFactory.create<NestExpressApplication>(AppModule.forRoot(config, logger), new ExpressAdapter(), {
    bodyParser: false,
    logger,
    abortOnError: false,
    // Open SSE streams must not keep the server from closing.
    forceCloseConnections: true,
  });
  app.getHttpAdapter().getInstance().disable('x-powered-by');

  // Order matters: id and log first (so they see every request, including rejected ones), then parsers.
  app.use(requestContextMiddleware);
  app.use(securityHeadersMiddleware);
  app.use(requestLogMiddleware(logger));
  // Rate limits before the body is read (a flood is refused cheaply); sign-in attempts after it (they need the e-mail).
  const limits = rateLimitSettingsFrom(config);
  app.use(requestRateLimitMiddleware(limits));
  app.useBodyParser('json', { limit: BODY_LIMIT_BYTES, type: ['application/json', 'application/*+json'], strict: true });
  app.useBodyParser('text', { limit: BODY_LIMIT_BYTES, type: ['text/csv', 'text/plain'] });
  app.use(inputSafetyMiddleware);
  app.use(loginThrottleMiddleware(limits));

  const cors = corsOptions(config.CORS_ORIGINS);
  if (cors) app.enableCors(cors);

  app.enableVersioning({ type: VersioningType.URI, defaultVersion: '1' });
  app.useGlobalFilters(new ApiExceptionFilter(logger));
  if (options.shutdownHooks) app.enableShutdownHooks();
  setupOpenApi(app);
  await app.init();
  return app;
}

export async function createApiApp(config: ApiConfig, options: ApiAppOptions = {}): Promise<ApiHandle> {
  const app = await buildApiApp(config, options);
  await app.listen(options.port ?? 0, options.host ?? '127.0.0.1');
  const address = app.getHttpServer().address() as AddressInfo;
  const host = address.family === 'IPv6' ? `[${address.address === '::' ? '::1' : address.address}]` : address.address === '0.0.0.0' ? '127.0.0.1' : address.address;
  let closed = false;
  return {
    app,
    url: `http://${host}:${address.port}`,
    async close() {
      if (closed) return;
      closed = true;
      await app.close();
    },
  };
}
