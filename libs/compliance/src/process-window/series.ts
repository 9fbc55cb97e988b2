import type { TemperatureSample } from './types.js';

/**
 * Time-series helpers for rule evaluation. A reading is taken to hold from its time until the next
 * reading, but never longer than the allowed channel gap: beyond that the value is unknown (null) and is
 * not interpolated (practice.md §5.3: a recording gap is a compliance question, not missing data to fill).
 */

/** Sorted by time, non-finite values dropped, one reading per instant (the last given wins). */
export function normalizeSamples(samples: readonly TemperatureSample[]): TemperatureSample[] {
  const byTime = new Map<number, number>();
  for (const s of samples) {
    if (Number.isFinite(s.tMs) && Number.isFinite(s.valueC)) byTime.set(s.tMs, s.valueC);
  }
  return [...byTime.entries()].sort((a, b) => a[0] - b[0]).map(([tMs, valueC]) => ({ tMs, valueC }));
}

/** A stretch of time with one known value, or with no known value. */
export interface Segment {
  fromMs: number;
  toMs: number;
  value: number | null;
}

/**
 * Covers [startMs, endMs] with segments of held values. The reading just before startMs counts if it is
 * recent enough (within maxHoldMs). Samples must be normalized.
 */
export function heldSegments(samples: readonly TemperatureSample[], startMs: number, endMs: number, maxHoldMs: number): Segment[] {
  const out: Segment[] = [];
  if (!(endMs > startMs)) return out;
  const push = (fromMs: number, toMs: number, value: number | null) => {
    const a = Math.max(fromMs, startMs);
    const b = Math.min(toMs, endMs);
    if (b <= a) return;
    const last = out[out.length - 1];
    if (last && last.value === value && last.toMs === a) last.toMs = b;
    else out.push({ fromMs: a, toMs: b, value });
  };
  let cursor = startMs;
  for (let i = 0; i < samples.length; i++) {
    const s = samples[i];
    const nextT = i + 1 < samples.length ? samples[i + 1].tMs : Number.POSITIVE_INFINITY;
    const holdEnd = Math.min(nextT, s.tMs + maxHoldMs);
    if (holdEnd <= startMs) continue;
    if (s.tMs >= endMs) break;
    if (s.tMs > cursor) push(cursor, s.tMs, null);
    push(s.tMs, holdEnd, s.valueC);
    cursor = Math.max(cursor, holdEnd);
  }
  if (cursor < endMs) push(cursor, endMs, null);
  return out;
}

/** Several channels' segments merged onto common breakpoints: values[i] belongs to channel i. */
export interface JointSegment {
  fromMs: number;
  toMs: number;
  values: (number | null)[];
}

export function jointSegments(perChannel: readonly Segment[][], startMs: number, endMs: number): JointSegment[] {
  if (!(endMs > startMs)) return [];
  const points = new Set<number>([startMs, endMs]);
  for (const segs of perChannel) for (const s of segs) points.add(s.fromMs).add(s.toMs);
  const sorted = [...points].filter((p) => p >= startMs && p <= endMs).sort((a, b) => a - b);
  const cursors = perChannel.map(() => 0);
  const out: JointSegment[] = [];
  for (let k = 0; k + 1 < sorted.length; k++) {
    const fromMs = sorted[k];
    const toMs = sorted[k + 1];
    const values = perChannel.map((segs, c) => {
      while (cursors[c] < segs.length && segs[cursors[c]].toMs <= fromMs) cursors[c]++;
      const s = segs[cursors[c]];
      return s && s.fromMs <= fromMs ? s.value : null;
    });
    out.push({ fromMs, toMs, values });
  }
  return out;
}

export type SegmentState = 'bad' | 'good' | 'unknown';

/** A continuous stretch in the 'bad' state. */
export interface Run {
  fromMs: number;
  toMs: number;
  durationMs: number;
}

/**
 * Runs of 'bad' time. A run starts at a bad segment and ends only where the record shows the good state
 * again: unknown time inside a run counts into it (we never saw it come back). Trailing unknown time
 * after the last bad segment is not counted (nothing says it is still bad).
 */
export function badRuns<T extends { fromMs: number; toMs: number }>(segments: readonly T[], classify: (s: T) => SegmentState): Run[] {
  const runs: Run[] = [];
  let open: { fromMs: number; lastBadEndMs: number } | null = null;
  for (const s of segments) {
    const state = classify(s);
    if (state === 'bad') {
      if (!open) open = { fromMs: s.fromMs, lastBadEndMs: s.toMs };
      else open.lastBadEndMs = s.toMs;
    } else if (state === 'good' && open) {
      runs.push({ fromMs: open.fromMs, toMs: s.fromMs, durationMs: s.fromMs - open.fromMs });
      open = null;
    }
  }
  if (open) runs.push({ fromMs: open.fromMs, toMs: open.lastBadEndMs, durationMs: open.lastBadEndMs - open.fromMs });
  return runs;
}

/** Runs of 'good' time that unknown or bad time interrupts (for proving time at temperature). */
export function strictGoodRuns<T extends { fromMs: number; toMs: number }>(segments: readonly T[], isGood: (s: T) => boolean): Run[] {
  const runs: Run[] = [];
  let open: { fromMs: number; toMs: number } | null = null;
  for (const s of segments) {
    if (isGood(s)) {
      if (open && open.toMs === s.fromMs) open.toMs = s.toMs;
      else {
        if (open) runs.push({ ...open, durationMs: open.toMs - open.fromMs });
        open = { fromMs: s.fromMs, toMs: s.toMs };
      }
    } else if (open) {
      runs.push({ ...open, durationMs: open.toMs - open.fromMs });
      open = null;
    }
  }
  if (open) runs.push({ ...open, durationMs: open.toMs - open.fromMs });
  return runs;
}

export function longest(runs: readonly Run[]): Run | null {
  let best: Run | null = null;
  for (const r of runs) if (!best || r.durationMs > best.durationMs) best = r;
  return best;
}

/** Max/min without spreading (a long series would overflow the call stack); null for none. */
export function maxOf(values: readonly number[]): number | null {
  let m: number | null = null;
  for (const v of values) if (m === null || v > m) m = v;
  return m;
}
export function minOf(values: readonly number[]): number | null {
  let m: number | null = null;
  for (const v of values) if (m === null || v < m) m = v;
  return m;
}

export function samplesWithin(samples: readonly TemperatureSample[], startMs: number, endMs: number): TemperatureSample[] {
  return samples.filter((s) => s.tMs >= startMs && s.tMs <= endMs);
}

// Formatting for messages: fixed decimals so a recompute with the same data gives the same text.
export const fmtC = (v: number) => `${v.toFixed(1)} °C`;
export const fmtRangeC = (lo: number, hi: number) => `${lo.toFixed(1)}–${hi.toFixed(1)} °C`;
export const fmtS = (ms: number) => `${Math.round(ms / 1000)} s`;
export const fmtMin = (ms: number) => `${(ms / 60_000).toFixed(1)} min`;
export const fmtTime = (ms: number) => new Date(ms).toISOString().replace(/\.\d{3}Z$/, 'Z');

/**
 * Times in messages, on the plant's clock: "2026-12-01 13:09:08 CET" in the line's IANA zone (people read
 * deviations against shift logs and chart recorders kept in local time). Without a zone: ISO UTC. The
 * findings' details keep ISO UTC for machines. A zone Intl does not know is a caller error.
 */
export function plantClock(timeZone?: string): (ms: number) => string {
  if (!timeZone) return fmtTime;
  const format = new Intl.DateTimeFormat('en-GB', {
    timeZone, hourCycle: 'h23', year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit', second: '2-digit', timeZoneName: 'short',
  });
  return (ms) => {
    const p = Object.fromEntries(format.formatToParts(new Date(ms)).map((x) => [x.type, x.value]));
    return `${p['year']}-${p['month']}-${p['day']} ${p['hour']}:${p['minute']}:${p['second']} ${p['timeZoneName']}`;
  };
}
