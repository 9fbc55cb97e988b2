import type { ApiConfig } from '../app-config.js';

/**
 * Ingest tunables, read from the API configuration when present (libs/contracts loadConfig) and
 * otherwise defaulted. Kept apart so tests can build them directly.
 */
export interface IngestSettings {
  /** Device times further ahead of the server clock than this are refused (practice.md §5.2). */
  maxFutureMs: number;
  /** Stored Idempotency-Key replies live this long (practice.md §5.4). */
  idempotencyTtlMs: number;
  /** SSE heartbeat interval on GET /v1/stream. */
  streamHeartbeatMs: number;
}

export const DEFAULT_INGEST_SETTINGS: IngestSettings = {
  maxFutureMs: 300_000,
  idempotencyTtlMs: 24 * 3_600_000,
  streamHeartbeatMs: 15_000,
};

function numberOr(value: unknown, fallback: number): number {
  const n = typeof value === 'string' ? Number(value) : value;
  return typeof n === 'number' && Number.isFinite(n) && n >= 0 ? n : fallback;
}

export function ingestSettingsFrom(config: ApiConfig): IngestSettings {
  const raw = config as unknown as Record<string, unknown>;
  return {
    maxFutureMs: numberOr(raw['SAMPLE_MAX_FUTURE_S'], DEFAULT_INGEST_SETTINGS.maxFutureMs / 1000) * 1000,
    idempotencyTtlMs: numberOr(raw['IDEMPOTENCY_TTL_H'], DEFAULT_INGEST_SETTINGS.idempotencyTtlMs / 3_600_000) * 3_600_000,
    streamHeartbeatMs: Math.max(0.05, numberOr(raw['STREAM_HEARTBEAT_S'], DEFAULT_INGEST_SETTINGS.streamHeartbeatMs / 1000)) * 1000,
  };
}
