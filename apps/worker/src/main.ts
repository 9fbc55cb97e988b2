/**
 * Worker process entry: `node apps/worker/dist/main.js` (after `npm run build`). Reads the configuration
 * first and stops with one message per bad variable (exit code 1) before touching Postgres or Redis.
 * On SIGTERM/SIGINT Nest drains the recompute jobs (enableShutdownHooks); if that takes longer than
 * SHUTDOWN_TIMEOUT_MS the process leaves anyway (a cut-off job stalls and another worker retries it).
 */
import 'reflect-metadata';
import { ConfigError, loadConfig } from '@ausline/contracts';
import { WorkerLogger, errorMessage } from './logger.js';
import { startWorker } from './start-worker.js';

function readConfig() {
  try {
    return loadConfig(process.env);
  } catch (error) {
    if (error instanceof ConfigError) {
      process.stderr.write(`ausline worker: ${error.message}\n`);
      process.exit(1);
    }
    throw error;
  }
}

const config = readConfig();
const logger = new WorkerLogger(config.LOG_LEVEL);

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
  const worker = await startWorker(config, { logger, shutdownHooks: true });
  logger.event('info', { msg: 'worker started', concurrency: config.WORKER_CONCURRENCY, queuePrefix: config.QUEUE_PREFIX, metrics: worker.metricsUrl });
} catch (error) {
  logger.event('error', { msg: 'worker failed to start', error: errorMessage(error) });
  process.exit(1);
}
