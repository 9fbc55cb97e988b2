/**
 * API process entry: `node apps/api/dist/main.js` (after `npm run build`). Reads the configuration
 * from the environment first and stops with one message per bad variable (exit code 1) before
 * touching Postgres or Redis.
 */
import 'reflect-metadata';
import { ConfigError, loadConfig } from '@ausline/contracts';
import { createApiApp } from './create-api-app.js';
import { JsonLogger } from './http/logger.js';

function readConfig() {
  try {
    return loadConfig(process.env);
  } catch (error) {
    if (error instanceof ConfigError) {
      process.stderr.write(`ausline api: ${error.message}\n`);
      process.exit(1);
    }
    throw error;
  }
}

const config = readConfig();
const logger = new JsonLogger(config.LOG_LEVEL);

// Nest closes the app on these signals (enableShutdownHooks); if closing hangs, leave anyway.
for (const signal of ['SIGTERM', 'SIGINT'] as const) {
  process.once(signal, () => {
    logger.event('info', { msg: 'shutting down', signal, timeoutMs: config.SHUTDOWN_TIMEOUT_MS });
    setTimeout(() => {
      logger.event('error', { msg: 'shutdown took too long; exiting', timeoutMs: config.SHUTDOWN_TIMEOUT_MS });
      process.exit(1);
    }, config.SHUTDOWN_TIMEOUT_MS).unref();
  });
}

try {
  const api = await createApiApp(config, { port: config.PORT, host: config.HOST, logger, shutdownHooks: true });
  logger.event('info', { msg: 'api listening', url: api.url, docs: `${api.url}/docs` });
} catch (error) {
  logger.event('error', { msg: 'api failed to start', error: error instanceof Error ? error.message : String(error) });
  process.exit(1);
}
