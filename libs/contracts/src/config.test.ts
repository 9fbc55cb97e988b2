import { describe, expect, it } from 'vitest';
import { CONFIG_VARIABLES, ConfigError, ConfigSchema, loadConfig } from './config.js';

const minimal = { DATABASE_URL: 'postgresql://postgres@127.0.0.1:5432/ausline', REDIS_URL: 'redis://127.0.0.1:6379' };

describe('loadConfig', () => {
  it('fills every default from the two required URLs', () => {
    const config = loadConfig(minimal);
    expect(config).toEqual({
      ...minimal,
      PORT: 3000,
      HOST: '0.0.0.0',
      QUEUE_PREFIX: 'ausline',
      SESSION_TTL_MIN: 480,
      PLANT_TIME_ZONE: 'UTC',
      LOG_LEVEL: 'info',
      DASHBOARD_DIR: undefined,
      CORS_ORIGINS: [],
      SAMPLE_MAX_FUTURE_S: 300,
      IDEMPOTENCY_TTL_H: 24,
      STREAM_HEARTBEAT_S: 15,
      WORKER_CONCURRENCY: 2,
      WORKER_METRICS_PORT: 9464,
      RECONCILE_INTERVAL_S: 10,
      SHUTDOWN_TIMEOUT_MS: 10_000,
      RATE_LIMIT_IP_PER_S: 200,
      RATE_LIMIT_IP_BURST: 400,
      RATE_LIMIT_KEY_PER_S: 50,
      RATE_LIMIT_KEY_BURST: 200,
      LOGIN_MAX_FAILURES_PER_ACCOUNT: 10,
      LOGIN_MAX_FAILURES_PER_IP: 50,
      LOGIN_FAILURE_WINDOW_MIN: 15,
    });
  });

  it('parses given values to their types', () => {
    const config = loadConfig({
      ...minimal,
      PORT: '0',
      SESSION_TTL_MIN: ' 60 ',
      PLANT_TIME_ZONE: 'Europe/Berlin',
      LOG_LEVEL: 'debug',
      CORS_ORIGINS: 'https://a.example.com, http://localhost:5173',
      DASHBOARD_DIR: '/srv/dashboard',
    });
    expect(config.PORT).toBe(0);
    expect(config.SESSION_TTL_MIN).toBe(60);
    expect(config.PLANT_TIME_ZONE).toBe('Europe/Berlin');
    expect(config.CORS_ORIGINS).toEqual(['https://a.example.com', 'http://localhost:5173']);
    expect(config.DASHBOARD_DIR).toBe('/srv/dashboard');
  });

  it('lists every missing and bad variable in one error, without echoing passwords', () => {
    let error: unknown;
    try {
      loadConfig({
        DATABASE_URL: 'mysql://root:hunter2@db/ausline',
        PORT: 'eighty',
        SESSION_TTL_MIN: '0',
        PLANT_TIME_ZONE: 'Mars/Olympus',
        LOG_LEVEL: 'loud',
        CORS_ORIGINS: 'https://ok.example.com,not an origin',
        IGNORED_OTHER_VARIABLE: 'x',
      });
    } catch (e) {
      error = e;
    }
    expect(error).toBeInstanceOf(ConfigError);
    const problems = Object.fromEntries((error as ConfigError).problems.map((p) => [p.variable, p.problem]));
    expect(Object.keys(problems).sort()).toEqual(
      ['CORS_ORIGINS', 'DATABASE_URL', 'LOG_LEVEL', 'PLANT_TIME_ZONE', 'PORT', 'REDIS_URL', 'SESSION_TTL_MIN'].sort(),
    );
    expect(problems.REDIS_URL).toMatch(/^is required but not set/);
    expect(problems.DATABASE_URL).toMatch(/must be a URL like postgresql:\/\//);
    expect(problems.PORT).toBe('must be a whole number, got "eighty"');
    expect(problems.SESSION_TTL_MIN).toBe('must be at least 1, got "0"');
    expect(problems.PLANT_TIME_ZONE).toMatch(/IANA time zone/);
    expect(problems.LOG_LEVEL).toMatch(/one of debug, info, warn, error, silent/);
    expect(problems.CORS_ORIGINS).toMatch(/exact origins/);
    const message = (error as Error).message;
    expect(message).toMatch(/^Invalid configuration \(7 problems\):/);
    expect(message).not.toContain('hunter2');
    expect(message).toContain('mysql://root:***@db/ausline');
  });

  it('treats empty strings as unset', () => {
    expect(() => loadConfig({ ...minimal, REDIS_URL: '' })).toThrow(/REDIS_URL: is required but not set/);
    expect(loadConfig({ ...minimal, PORT: '' }).PORT).toBe(3000);
  });

  it('rejects a port above 65535', () => {
    expect(() => loadConfig({ ...minimal, PORT: '70000' })).toThrow(/PORT: must be at most 65535/);
  });

  it('documents exactly the variables it reads, with the right required flags and defaults', () => {
    expect(CONFIG_VARIABLES.map((d) => d.name).sort()).toEqual(Object.keys(ConfigSchema.shape).sort());
    for (const doc of CONFIG_VARIABLES) {
      const field = ConfigSchema.shape[doc.name];
      expect(field.safeParse(undefined).success, doc.name).toBe(!doc.required);
      if (doc.defaultValue !== undefined && doc.defaultValue !== '') {
        const fromDefault = loadConfig({ ...minimal, [doc.name]: doc.defaultValue })[doc.name];
        expect(fromDefault, doc.name).toEqual(loadConfig(minimal)[doc.name]);
      }
    }
  });
});
