import { describe, expect, it } from 'vitest';
import { PredictionDeferral } from './prediction-deferral.js';

describe('PredictionDeferral', () => {
  const clock = () => {
    let nowMs = 1_000_000;
    return { now: () => nowMs, advance: (ms: number) => (nowMs += ms) };
  };

  it('predicts when no newer recompute is queued, defers when one is', () => {
    const c = clock();
    const d = new PredictionDeferral(10_000, c.now);
    expect(d.shouldDefer('a', false)).toBe(false);
    expect(d.shouldDefer('a', true)).toBe(true);
    expect(d.shouldDefer('b', true)).toBe(true);
  });

  it('bounds a streak of deferrals: a batch posted to faster than it is recomputed still predicts every maxDeferMs', () => {
    const c = clock();
    const d = new PredictionDeferral(10_000, c.now);
    const decisions: boolean[] = [];
    for (let i = 0; i < 25; i++) {
      decisions.push(d.shouldDefer('a', true));
      c.advance(1_000);
    }
    // Deferred for 10 s (t = 0..9 s), predicted at t = 10 s, then a new streak: deferred 11..20 s, predicted at 21 s.
    expect(decisions.map((x, i) => (x ? null : i)).filter((i) => i !== null)).toEqual([10, 21]);
  });

  it('a prediction (nothing queued behind) ends the streak; the next deferral starts a new one', () => {
    const c = clock();
    const d = new PredictionDeferral(10_000, c.now);
    expect(d.shouldDefer('a', true)).toBe(true);
    c.advance(9_000);
    expect(d.shouldDefer('a', false)).toBe(false);
    c.advance(5_000);
    expect(d.shouldDefer('a', true)).toBe(true);
    c.advance(9_000);
    expect(d.shouldDefer('a', true)).toBe(true);
  });

  it('streaks are per batch', () => {
    const c = clock();
    const d = new PredictionDeferral(10_000, c.now);
    expect(d.shouldDefer('a', true)).toBe(true);
    c.advance(10_000);
    expect(d.shouldDefer('b', true)).toBe(true);
    expect(d.shouldDefer('a', true)).toBe(false);
    expect(d.shouldDefer('b', true)).toBe(true);
  });
});
