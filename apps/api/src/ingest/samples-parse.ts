import { DEVICE_TIME_MAX_MS, DEVICE_TIME_MIN_MS, SAMPLES_MAX_PER_REQUEST, SamplesPost } from '@ausline/contracts';
import { parseBody } from '../http/validation.js';

/** The longest channel code SampleInput takes (libs/contracts: Code). */
const CHANNEL_MAX_CHARS = 64;

/**
 * The request body as SamplesPost, exactly as parseBody(SamplesPost, body) gives it, for less CPU on the
 * common shape: { samples: [{ channel, t, value }, ...] } with trimmed channel codes and t in epoch
 * milliseconds. Such a body is checked here in one loop (the same rules as the schema: exactly those
 * keys, channel 1 to 64 characters, t an integer between 2000-01-01 and 2100-01-01, value a finite
 * number) and taken as it is; any other body goes through parseBody, which also writes the 400s.
 * samples-parse.test.ts checks on seeded random bodies that whatever this path takes, the schema takes
 * too, with the same result. (Every JSON body has already passed inputSafetyMiddleware, the walk that
 * parseBody repeats before the schema.)
 */
export function parseSamplesPost(body: unknown): SamplesPost {
  return commonShape(body) ?? parseBody(SamplesPost, body);
}

/** The body when it has the common shape and passes the schema's rules; undefined otherwise. */
export function commonShape(body: unknown): SamplesPost | undefined {
  if (!isPlainRecord(body) || !hasOnlyKeys(body, 1, 'samples')) return undefined;
  const samples = body['samples'];
  if (!Array.isArray(samples) || samples.length < 1 || samples.length > SAMPLES_MAX_PER_REQUEST) return undefined;
  for (const sample of samples as unknown[]) {
    if (!isPlainRecord(sample) || !hasOnlyKeys(sample, 3, 'channel', 't', 'value')) return undefined;
    const { channel, t, value } = sample;
    if (typeof channel !== 'string' || channel.length === 0 || channel.length > CHANNEL_MAX_CHARS || channel.trim() !== channel) return undefined;
    if (typeof t !== 'number' || !Number.isInteger(t) || t < DEVICE_TIME_MIN_MS || t > DEVICE_TIME_MAX_MS) return undefined;
    if (typeof value !== 'number' || !Number.isFinite(value)) return undefined;
  }
  return body as SamplesPost;
}

function isPlainRecord(value: unknown): value is Record<string, unknown> {
  return value !== null && typeof value === 'object' && !Array.isArray(value) && Object.getPrototypeOf(value) === Object.prototype;
}

function hasOnlyKeys(record: Record<string, unknown>, count: number, ...allowed: string[]): boolean {
  const keys = Object.keys(record);
  if (keys.length !== count) return false;
  for (const k of keys) if (!allowed.includes(k)) return false;
  return true;
}
