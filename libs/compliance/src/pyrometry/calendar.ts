// Calendar arithmetic for due dates. Auditors check due dates to the day, so every interval is
// counted here, in one place, on calendar dates in the plant's time zone (not on elapsed hours).
//
// Rule (AMS 2750E §2.2.25 as quoted in practice.md §1.1 [S8]):
// - "weekly" is the same weekday 7 calendar days later (an interval in days);
// - "monthly" is the same date in the next month, or that month's last day when the date does not
//   exist there; quarterly, semi-annual and annual count the same way (intervals in months).

import type { Interval } from './types.js';

/** A calendar date as 'YYYY-MM-DD'. Strings compare correctly with < and >. */
export type CalendarDate = string;

const DATE_PATTERN = /^(\d{4})-(\d{2})-(\d{2})$/;

export const WEEKLY: Interval = { unit: 'day', count: 7 };
export const BIWEEKLY: Interval = { unit: 'day', count: 14 };
export const MONTHLY: Interval = { unit: 'month', count: 1 };
export const QUARTERLY: Interval = { unit: 'month', count: 3 };
export const SEMIANNUAL: Interval = { unit: 'month', count: 6 };
export const ANNUAL: Interval = { unit: 'month', count: 12 };

function parts(date: CalendarDate): { year: number; month: number; day: number } {
  const match = DATE_PATTERN.exec(date);
  if (!match) throw new RangeError(`not a calendar date (YYYY-MM-DD): ${JSON.stringify(date)}`);
  const year = Number(match[1]);
  const month = Number(match[2]);
  const day = Number(match[3]);
  if (month < 1 || month > 12 || day < 1 || day > daysInMonth(year, month)) {
    throw new RangeError(`no such calendar date: ${date}`);
  }
  return { year, month, day };
}

function format(year: number, month: number, day: number): CalendarDate {
  return `${String(year).padStart(4, '0')}-${String(month).padStart(2, '0')}-${String(day).padStart(2, '0')}`;
}

export function isLeapYear(year: number): boolean {
  return (year % 4 === 0 && year % 100 !== 0) || year % 400 === 0;
}

export function daysInMonth(year: number, month: number): number {
  // Day 0 of the next month is the last day of this one; UTC avoids any local-time shift.
  return new Date(Date.UTC(year, month, 0)).getUTCDate();
}

/** The calendar date an instant falls on in the given IANA time zone (default UTC). */
export function localDateOf(instant: Date, timeZone = 'UTC'): CalendarDate {
  if (Number.isNaN(instant.getTime())) throw new RangeError('invalid instant');
  // Intl is deterministic for a given ICU build and needs no I/O; it knows DST transitions,
  // which a fixed UTC offset would get wrong twice a year.
  const formatted = new Intl.DateTimeFormat('en-CA', {
    timeZone,
    year: 'numeric',
    month: '2-digit',
    day: '2-digit',
  }).formatToParts(instant);
  const get = (type: string): number => Number(formatted.find((p) => p.type === type)?.value);
  return format(get('year'), get('month'), get('day'));
}

export function addDays(date: CalendarDate, days: number): CalendarDate {
  const { year, month, day } = parts(date);
  const shifted = new Date(Date.UTC(year, month - 1, day + days));
  return format(shifted.getUTCFullYear(), shifted.getUTCMonth() + 1, shifted.getUTCDate());
}

/** Same date `months` later, clamped to the last day of the target month (the [S8] rule). */
export function addMonths(date: CalendarDate, months: number): CalendarDate {
  const { year, month, day } = parts(date);
  const monthIndex = year * 12 + (month - 1) + months;
  const targetYear = Math.floor(monthIndex / 12);
  const targetMonth = (monthIndex % 12) + 1;
  return format(targetYear, targetMonth, Math.min(day, daysInMonth(targetYear, targetMonth)));
}

/** The date an interval after `date` falls due. Counted from the date the work was done. */
export function addInterval(date: CalendarDate, interval: Interval): CalendarDate {
  assertInterval(interval);
  return interval.unit === 'day' ? addDays(date, interval.count) : addMonths(date, interval.count);
}

/** Whole calendar days from a to b (negative when b is earlier). */
export function daysBetween(a: CalendarDate, b: CalendarDate): number {
  const pa = parts(a);
  const pb = parts(b);
  return Math.round((Date.UTC(pb.year, pb.month - 1, pb.day) - Date.UTC(pa.year, pa.month - 1, pa.day)) / 86_400_000);
}

export function assertInterval(interval: Interval): void {
  if (!Number.isInteger(interval.count) || interval.count < 1) {
    throw new RangeError(`interval count must be a whole number ≥ 1, got ${interval.count} ${interval.unit}(s)`);
  }
}

/**
 * Shortest and longest span in days an interval can have, over every start date in two 4-year
 * windows: 1999–2002 (one leap day) and 2099–2102 (2100 skips its leap day), which together cover
 * every leap pattern a span of up to a few years can meet. Used to compare a month interval with a
 * day interval when deciding whether an overlay is stricter.
 */
export function intervalSpanDays(interval: Interval): { minDays: number; maxDays: number } {
  assertInterval(interval);
  if (interval.unit === 'day') return { minDays: interval.count, maxDays: interval.count };
  let minDays = Number.POSITIVE_INFINITY;
  let maxDays = 0;
  for (const startYear of [1999, 2099]) {
    let date = format(startYear, 1, 1);
    for (let i = 0; i < 4 * 366; i += 1) {
      const span = daysBetween(date, addMonths(date, interval.count));
      minDays = Math.min(minDays, span);
      maxDays = Math.max(maxDays, span);
      date = addDays(date, 1);
    }
  }
  return { minDays, maxDays };
}

/**
 * Compares how strict two intervals are: negative when a is always shorter or equal in every
 * calendar position (stricter), positive when always longer, 0 when equal, NaN when it depends on
 * the start date (e.g. 30 days vs 1 month).
 */
export function compareIntervals(a: Interval, b: Interval): number {
  if (a.unit === b.unit) return a.count - b.count;
  const sa = intervalSpanDays(a);
  const sb = intervalSpanDays(b);
  if (sa.maxDays <= sb.minDays) return sa.maxDays === sb.minDays && sa.minDays === sb.maxDays ? 0 : -1;
  if (sa.minDays >= sb.maxDays) return 1;
  return Number.NaN;
}

export function describeInterval(interval: Interval): string {
  if (interval.unit === 'day') {
    if (interval.count === 7) return 'weekly (7 days)';
    if (interval.count === 14) return 'every 14 days';
    return `every ${interval.count} day${interval.count === 1 ? '' : 's'}`;
  }
  const names: Record<number, string> = { 1: 'monthly', 3: 'quarterly', 6: 'semi-annual', 12: 'annual' };
  return names[interval.count] ?? `every ${interval.count} months`;
}
