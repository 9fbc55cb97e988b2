import { describe, expect, it } from 'vitest';
import { formatDateTime, formatDuration, formatIsoInZone, msToWallInput, plantZoneLabel, wallTimeToMs, zoneOffsetMinutes } from './time.js';

// Offsets of Europe/Berlin (CET UTC+1, CEST UTC+2, changes on the last Sundays of March and October
// at 01:00 UTC) and America/Chicago are from the IANA time zone database as Node's ICU ships it.
describe('plant time zone', () => {
  const berlin = 'Europe/Berlin';

  it('formats an instant as the plant wall clock, not the machine clock', () => {
    const t = Date.UTC(2026, 0, 15, 5, 14, 9);
    expect(formatDateTime(t, berlin)).toBe('2026-01-15 06:14');
    expect(formatDateTime(t, berlin, true)).toBe('2026-01-15 06:14:09');
    expect(formatDateTime(t, 'America/Chicago')).toBe('2026-01-14 23:14');
    expect(formatDateTime(null, berlin)).toBe('—');
  });

  it('knows the offset in winter and summer', () => {
    expect(zoneOffsetMinutes(Date.UTC(2026, 0, 15), berlin)).toBe(60);
    expect(zoneOffsetMinutes(Date.UTC(2026, 6, 15), berlin)).toBe(120);
    expect(plantZoneLabel(berlin, Date.UTC(2026, 6, 15))).toBe('Europe/Berlin (UTC+02:00)');
    expect(plantZoneLabel('UTC', Date.UTC(2026, 6, 15))).toBe('UTC (UTC+00:00)');
  });

  it('turns a wall time typed into a filter into the right instant', () => {
    expect(wallTimeToMs('2026-01-15T06:00', berlin)).toBe(Date.UTC(2026, 0, 15, 5, 0));
    expect(wallTimeToMs('2026-07-15T06:00', berlin)).toBe(Date.UTC(2026, 6, 15, 4, 0));
    expect(wallTimeToMs('2026-07-15', berlin)).toBe(Date.UTC(2026, 6, 14, 22, 0));
    expect(wallTimeToMs('not a date', berlin)).toBeNull();
    expect(wallTimeToMs('2026-13-01T00:00', berlin)).toBeNull();
  });

  it('handles the clock changes: a doubled hour takes the earlier instant, a skipped one the time after the jump', () => {
    // 2026-10-25 02:30 happens twice in Berlin (CEST then CET): the first is 00:30 UTC.
    expect(wallTimeToMs('2026-10-25T02:30', berlin)).toBe(Date.UTC(2026, 9, 25, 0, 30));
    // 2026-03-29 02:30 does not exist in Berlin; clocks jump from 02:00 to 03:00 (01:00 UTC).
    expect(wallTimeToMs('2026-03-29T02:30', berlin)).toBe(Date.UTC(2026, 2, 29, 1, 30));
  });

  it('round-trips through the datetime-local input format', () => {
    const t = Date.UTC(2026, 4, 3, 12, 45);
    expect(wallTimeToMs(msToWallInput(t, berlin), berlin)).toBe(t);
  });

  it('writes ISO 8601 with the plant offset for exports', () => {
    expect(formatIsoInZone(Date.UTC(2026, 0, 15, 5, 14, 9), berlin)).toBe('2026-01-15T06:14:09+01:00');
    expect(formatIsoInZone('2026-07-15T04:00:00.000Z', berlin)).toBe('2026-07-15T06:00:00+02:00');
  });

  it('formats durations with units', () => {
    expect(formatDuration(45_000)).toBe('45 s');
    expect(formatDuration(12 * 60_000 + 30_000)).toBe('12 min 30 s');
    expect(formatDuration(65 * 60_000)).toBe('1 h 05 min');
    expect(formatDuration(-90_000)).toBe('−1 min 30 s');
    expect(formatDuration(null)).toBe('—');
  });
});
