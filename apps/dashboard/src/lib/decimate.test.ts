import { describe, expect, it } from 'vitest';
import { decimateMinMax, toColumns } from './decimate.js';

/** A day of 1 Hz bath record around 370 °C with a small wobble and a few planted spikes/dips. */
function day(): { xs: Float64Array; ys: Float64Array } {
  const n = 86_400;
  const xs = new Float64Array(n);
  const ys = new Float64Array(n);
  const t0 = Date.UTC(2026, 2, 1, 6, 0, 0);
  for (let i = 0; i < n; i++) {
    xs[i] = t0 + i * 1000;
    ys[i] = 370 + Math.sin(i / 300) * 2;
  }
  ys[12_345] = 391.5; // a one-second spike
  ys[50_000] = 352.25; // a one-second dip
  return { xs, ys };
}

describe('decimateMinMax', () => {
  it('thins a day of 1 Hz data to at most two points per bucket and keeps every extreme', () => {
    const { xs, ys } = day();
    const out = decimateMinMax(xs, ys, { buckets: 1000 });
    expect(out.length).toBeLessThanOrEqual(2000);
    expect(out.length).toBeGreaterThan(1000);
    const values = out.map((p) => p.y as number);
    expect(Math.max(...values)).toBe(391.5);
    expect(Math.min(...values)).toBe(352.25);
    // the spike keeps its own time stamp
    expect(out.find((p) => p.y === 391.5)?.x).toBe(xs[12_345]);
  });

  it('keeps x order', () => {
    const { xs, ys } = day();
    const out = decimateMinMax(xs, ys, { buckets: 700 });
    for (let i = 1; i < out.length; i++) expect(out[i]!.x).toBeGreaterThanOrEqual(out[i - 1]!.x);
  });

  it('returns a short series unchanged', () => {
    const out = decimateMinMax([1, 2, 3], [10, 11, 12], { buckets: 100 });
    expect(out).toEqual([
      { x: 1, y: 10 },
      { x: 2, y: 11 },
      { x: 3, y: 12 },
    ]);
  });

  it('breaks the line at a gap longer than gapMs instead of joining across it', () => {
    const xs = [0, 1000, 2000, 60_000, 61_000];
    const ys = [370, 371, 372, 369, 368];
    const out = decimateMinMax(xs, ys, { buckets: 100, gapMs: 5000 });
    expect(out.filter((p) => p.y === null)).toHaveLength(1);
    const gapIndex = out.findIndex((p) => p.y === null);
    expect(out[gapIndex - 1]!.x).toBe(2000);
    expect(out[gapIndex + 1]!.x).toBe(60_000);
  });

  it('breaks the line at a gap inside decimated data too', () => {
    const xs: number[] = [];
    const ys: number[] = [];
    for (let i = 0; i < 10_000; i++) {
      if (i >= 4000 && i < 6000) continue; // 2000 s without data
      xs.push(i * 1000);
      ys.push(370);
    }
    const out = decimateMinMax(xs, ys, { buckets: 100, gapMs: 10_000 });
    expect(out.filter((p) => p.y === null)).toHaveLength(1);
  });

  it('limits to the visible range plus one neighbour on each side', () => {
    const xs = Array.from({ length: 100 }, (_, i) => i);
    const ys = xs.map((x) => x * 2);
    const out = decimateMinMax(xs, ys, { buckets: 1000, xMin: 10, xMax: 20 });
    expect(out[0]!.x).toBe(9);
    expect(out[out.length - 1]!.x).toBe(21);
  });

  it('toColumns splits pairs into typed arrays', () => {
    const { xs, ys } = toColumns([
      [1, 2],
      [3, 4],
    ]);
    expect([...xs]).toEqual([1, 3]);
    expect([...ys]).toEqual([2, 4]);
  });
});
