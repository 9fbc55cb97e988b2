import { describe, expect, it } from 'vitest';
import {
  addInterval,
  addMonths,
  ANNUAL,
  compareIntervals,
  daysBetween,
  intervalSpanDays,
  localDateOf,
  MONTHLY,
  QUARTERLY,
  SEMIANNUAL,
  WEEKLY,
} from './calendar.js';

// The counting rule under test is AMS 2750E §2.2.25 as quoted in practice.md §1.1 [S8]:
// weekly = same weekday 7 calendar days later; monthly = same date next month, or the last day of
// that month when the date does not exist; quarterly, semi-annual, annual count the same way.
describe('interval counting (AMS 2750E §2.2.25 via practice.md [S8])', () => {
  it('weekly is the same weekday 7 calendar days later, across a month end', () => {
    const due = addInterval('2024-02-28', WEEKLY); // a Wednesday
    expect(due).toBe('2024-03-06');
    expect(new Date(`${due}T00:00:00Z`).getUTCDay()).toBe(new Date('2024-02-28T00:00:00Z').getUTCDay());
  });

  it('monthly is the same date next month', () => {
    expect(addInterval('2024-03-15', MONTHLY)).toBe('2024-04-15');
    expect(addInterval('2024-12-15', MONTHLY)).toBe('2025-01-15');
  });

  it('monthly from the 31st falls on the last day of a shorter month (leap and common years)', () => {
    expect(addInterval('2024-01-31', MONTHLY)).toBe('2024-02-29'); // 2024 is a leap year
    expect(addInterval('2023-01-31', MONTHLY)).toBe('2023-02-28');
    expect(addInterval('2024-03-31', MONTHLY)).toBe('2024-04-30');
  });

  it('quarterly, semi-annual and annual count in months, not days', () => {
    expect(addInterval('2023-11-30', QUARTERLY)).toBe('2024-02-29');
    expect(addInterval('2022-11-30', QUARTERLY)).toBe('2023-02-28');
    expect(addInterval('2024-08-31', SEMIANNUAL)).toBe('2025-02-28');
    expect(addInterval('2024-02-29', ANNUAL)).toBe('2025-02-28');
    expect(addInterval('2023-02-28', ANNUAL)).toBe('2024-02-28'); // not the 29th: same date
    // A month is not 30 days: 1 month from 2024-02-01 is 29 days, from 2024-03-01 31 days.
    expect(daysBetween('2024-02-01', addMonths('2024-02-01', 1))).toBe(29);
    expect(daysBetween('2024-03-01', addMonths('2024-03-01', 1))).toBe(31);
  });

  it('counts each interval from the date the work was done, so clamping does not drift', () => {
    // Jan 31 → Feb 29; the next monthly test done on Feb 29 is due Mar 29, not Mar 31.
    expect(addInterval(addInterval('2024-01-31', MONTHLY), MONTHLY)).toBe('2024-03-29');
  });

  it('refuses impossible dates and zero intervals', () => {
    expect(() => addInterval('2023-02-29', MONTHLY)).toThrow(/no such calendar date/);
    expect(() => addInterval('2024-02-01', { unit: 'day', count: 0 })).toThrow(/≥ 1/);
  });
});

describe('plant-local calendar dates', () => {
  it('takes the date in the plant time zone, not in UTC', () => {
    const instant = new Date('2024-01-31T23:30:00Z');
    expect(localDateOf(instant)).toBe('2024-01-31');
    expect(localDateOf(instant, 'Europe/Berlin')).toBe('2024-02-01');
    expect(localDateOf(new Date('2024-03-01T03:00:00Z'), 'America/Chicago')).toBe('2024-02-29');
  });

  it('follows daylight-saving changes', () => {
    // Berlin switches to CEST on 2024-03-31 at 01:00 UTC; 22:30 UTC that day is already 00:30 on Apr 1.
    expect(localDateOf(new Date('2024-03-31T22:30:00Z'), 'Europe/Berlin')).toBe('2024-04-01');
    expect(localDateOf(new Date('2024-03-30T22:30:00Z'), 'Europe/Berlin')).toBe('2024-03-30');
  });
});

describe('comparing intervals for overlays', () => {
  it('orders same-unit intervals by count', () => {
    expect(compareIntervals(WEEKLY, { unit: 'day', count: 14 })).toBeLessThan(0);
    expect(compareIntervals(QUARTERLY, MONTHLY)).toBeGreaterThan(0);
    expect(compareIntervals(MONTHLY, MONTHLY)).toBe(0);
  });

  it('compares days with months only when it holds on every start date', () => {
    expect(intervalSpanDays(MONTHLY)).toEqual({ minDays: 28, maxDays: 31 });
    expect(compareIntervals({ unit: 'day', count: 28 }, MONTHLY)).toBeLessThan(0);
    expect(compareIntervals({ unit: 'day', count: 31 }, MONTHLY)).toBeGreaterThan(0);
    expect(Number.isNaN(compareIntervals({ unit: 'day', count: 30 }, MONTHLY))).toBe(true);
    expect(compareIntervals(WEEKLY, MONTHLY)).toBeLessThan(0);
  });
});
