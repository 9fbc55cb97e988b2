import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { longestFlatRun } from './rules/signal.js';
import { badRuns, heldSegments, jointSegments, normalizeSamples, plantClock, strictGoodRuns } from './series.js';

const s = (tMs: number, valueC: number) => ({ tMs, valueC });

describe('normalizeSamples', () => {
  it('sorts, drops non-finite values and keeps the last reading given for one instant', () => {
    expect(normalizeSamples([s(30, 3), s(10, 1), s(20, Number.NaN), s(10, 1.5), s(Number.POSITIVE_INFINITY, 9)])).toEqual([s(10, 1.5), s(30, 3)]);
  });
});

describe('heldSegments', () => {
  it('holds a reading until the next one, but no longer than the allowed gap', () => {
    // readings at 0, 10, 50 with max hold 20: 10..30 held, 30..50 unknown
    expect(heldSegments([s(0, 1), s(10, 2), s(50, 3)], 0, 60, 20)).toEqual([
      { fromMs: 0, toMs: 10, value: 1 },
      { fromMs: 10, toMs: 30, value: 2 },
      { fromMs: 30, toMs: 50, value: null },
      { fromMs: 50, toMs: 60, value: 3 },
    ]);
  });
  it('carries a recent reading from before the window start, not a stale one', () => {
    expect(heldSegments([s(-5, 7), s(10, 8)], 0, 20, 20)[0]).toEqual({ fromMs: 0, toMs: 10, value: 7 });
    expect(heldSegments([s(-50, 7), s(10, 8)], 0, 20, 20)[0]).toEqual({ fromMs: 0, toMs: 10, value: null });
  });
  it('returns nothing for an empty window and unknown for a window without readings', () => {
    expect(heldSegments([s(0, 1)], 10, 10, 5)).toEqual([]);
    expect(heldSegments([], 0, 10, 5)).toEqual([{ fromMs: 0, toMs: 10, value: null }]);
  });
});

describe('jointSegments', () => {
  it('puts two channels on common breakpoints', () => {
    const a = heldSegments([s(0, 1), s(10, 2)], 0, 20, 100);
    const b = heldSegments([s(5, 9)], 0, 20, 100);
    expect(jointSegments([a, b], 0, 20)).toEqual([
      { fromMs: 0, toMs: 5, values: [1, null] },
      { fromMs: 5, toMs: 10, values: [1, 9] },
      { fromMs: 10, toMs: 20, values: [2, 9] },
    ]);
  });
});

describe('badRuns and strictGoodRuns', () => {
  const segs = [
    { fromMs: 0, toMs: 10, st: 'good' },
    { fromMs: 10, toMs: 20, st: 'bad' },
    { fromMs: 20, toMs: 30, st: 'unknown' },
    { fromMs: 30, toMs: 40, st: 'bad' },
    { fromMs: 40, toMs: 50, st: 'good' },
    { fromMs: 50, toMs: 60, st: 'bad' },
    { fromMs: 60, toMs: 70, st: 'unknown' },
  ] as const;
  it('lets a bad run continue through unknown time until the record shows good again', () => {
    expect(badRuns(segs, (x) => x.st)).toEqual([
      { fromMs: 10, toMs: 40, durationMs: 30 },
      { fromMs: 50, toMs: 60, durationMs: 10 },
    ]);
  });
  it('breaks good runs on anything not good', () => {
    const g = [
      { fromMs: 0, toMs: 10, ok: true },
      { fromMs: 10, toMs: 20, ok: true },
      { fromMs: 20, toMs: 30, ok: false },
      { fromMs: 30, toMs: 40, ok: true },
    ];
    expect(strictGoodRuns(g, (x) => x.ok)).toEqual([
      { fromMs: 0, toMs: 20, durationMs: 20 },
      { fromMs: 30, toMs: 40, durationMs: 10 },
    ]);
  });
});

describe('longestFlatRun', () => {
  it('finds the longest stretch within epsilon', () => {
    const t = [0, 1, 2, 3, 4, 5, 6];
    const v = [10, 20, 20.01, 20.02, 19.99, 25, 25];
    expect(longestFlatRun(t, v, 0.05)).toMatchObject({ fromMs: 1, durationMs: 3, count: 4, lowC: 19.99, highC: 20.02 });
    expect(longestFlatRun([0], [1], 0.1)).toBeNull();
  });

  it('agrees with a brute-force search on random series (property)', () => {
    const brute = (t: number[], v: number[], eps: number) => {
      let best = -1;
      for (let l = 0; l < v.length; l++) {
        let lo = v[l];
        let hi = v[l];
        for (let r = l + 1; r < v.length; r++) {
          lo = Math.min(lo, v[r]);
          hi = Math.max(hi, v[r]);
          if (hi - lo > eps) break;
          best = Math.max(best, t[r] - t[l]);
        }
      }
      return best < 0 ? null : best;
    };
    fc.assert(
      fc.property(
        fc.array(fc.integer({ min: 0, max: 6 }), { minLength: 0, maxLength: 40 }),
        fc.array(fc.integer({ min: 1, max: 5 }), { minLength: 40, maxLength: 40 }),
        fc.integer({ min: 0, max: 3 }),
        (values, steps, eps) => {
          const t: number[] = [];
          let acc = 0;
          for (let i = 0; i < values.length; i++) t.push((acc += steps[i]));
          expect(longestFlatRun(t, values, eps)?.durationMs ?? null).toBe(brute(t, values, eps));
        },
      ),
      { seed: 20250304, numRuns: 300 },
    );
  });
});

describe('plantClock', () => {
  it('writes an instant on the plant\u2019s clock with its zone abbreviation, summer time included', () => {
    // Europe/London is GMT in winter and BST (UTC+1) from the last Sunday of March (common practice; IANA tz database).
    expect(plantClock('Europe/London')(Date.UTC(2026, 11, 1, 23, 30, 5))).toBe('2026-12-01 23:30:05 GMT');
    expect(plantClock('Europe/London')(Date.UTC(2026, 6, 1, 23, 30, 5))).toBe('2026-07-02 00:30:05 BST');
    expect(plantClock('UTC')(Date.UTC(2026, 0, 2, 3, 4, 5))).toBe('2026-01-02 03:04:05 UTC');
  });

  it('falls back to ISO UTC without a zone', () => {
    expect(plantClock()(Date.UTC(2026, 0, 2, 3, 4, 5))).toBe('2026-01-02T03:04:05Z');
  });
});
