/**
 * Every environment variable `npm run demo` (apps/line-sim/src/demo.ts) reads itself; the api and worker
 * it starts read theirs through loadConfig. tests/compose checks the compose `sim` service against it.
 */
export const DEMO_ENVIRONMENT = ['DATABASE_URL', 'REDIS_URL', 'PORT', 'QUEUE_PREFIX', 'PLANT_TIME_ZONE', 'LOG_LEVEL', 'WORKER_METRICS_PORT', 'AUSLINE_DEMO_STATE_DIR'] as const;
