import { describe, expect, it } from 'vitest';
import { erfc, inverseNormalCdf, latinHypercube, normalCdf, percentileOfSorted, percentilesInPlace, SeededRandom } from './random.js';

describe('seeded randomness', () => {
  it('is reproducible for a seed and differs between seeds', () => {
    const a = new SeededRandom(42);
    const b = new SeededRandom(42);
    const c = new SeededRandom(43);
    const sa = Array.from({ length: 5 }, () => a.nextUniform());
    const sb = Array.from({ length: 5 }, () => b.nextUniform());
    const sc = Array.from({ length: 5 }, () => c.nextUniform());
    expect(sa).toEqual(sb);
    expect(sa).not.toEqual(sc);
    for (const x of sa) expect(x > 0 && x < 1).toBe(true);
  });

  it('is roughly uniform', () => {
    const r = new SeededRandom(7);
    let sum = 0;
    const n = 100000;
    for (let i = 0; i < n; i++) sum += r.nextUniform();
    expect(Math.abs(sum / n - 0.5)).toBeLessThan(0.005);
  });
});

describe('normal distribution', () => {
  it('quantiles match the standard normal table', () => {
    // Standard normal quantiles (any statistics table): z(0.975) = 1.959964, z(0.95) = 1.644854, z(0.5) = 0, z(0.001) = −3.090232.
    expect(inverseNormalCdf(0.975)).toBeCloseTo(1.959964, 5);
    expect(inverseNormalCdf(0.95)).toBeCloseTo(1.644854, 5);
    expect(inverseNormalCdf(0.5)).toBeCloseTo(0, 9);
    expect(inverseNormalCdf(0.001)).toBeCloseTo(-3.090232, 5);
    expect(normalCdf(1.959964)).toBeCloseTo(0.975, 6);
    expect(erfc(0)).toBeCloseTo(1, 6);
  });
});

describe('Latin hypercube', () => {
  it('uses every stratum exactly once in every dimension', () => {
    const n = 200;
    const cols = latinHypercube(n, 3, new SeededRandom(1));
    for (const col of cols) {
      const strata = new Set(Array.from(col, (u) => Math.floor(u * n)));
      expect(strata.size).toBe(n);
    }
  });
});

describe('percentiles', () => {
  it('type 7 (linear between order statistics)', () => {
    const sorted = [1, 2, 3, 4, 5];
    expect(percentileOfSorted(sorted, 0.5)).toBe(3);
    expect(percentileOfSorted(sorted, 0.05)).toBeCloseTo(1.2, 12);
    expect(percentileOfSorted(sorted, 0.95)).toBeCloseTo(4.8, 12);
    expect(percentileOfSorted([1, Infinity, Infinity], 0.95)).toBe(Infinity);
  });
});

describe('percentiles without sorting', () => {
  it('equal the sorted type-7 percentiles for random data with ties and infinities', () => {
    const rng = new SeededRandom(99);
    for (let trial = 0; trial < 50; trial++) {
      const n = 1 + rng.nextInt(400);
      const data = new Float64Array(n);
      for (let i = 0; i < n; i++) data[i] = rng.nextUniform() < 0.1 ? Infinity : Math.round(rng.nextUniform() * 50);
      const sorted = data.slice().sort();
      const expected = [0.05, 0.5, 0.95].map((p) => percentileOfSorted(sorted, p));
      expect(percentilesInPlace(data.slice(), [0.05, 0.5, 0.95])).toEqual(expected);
    }
  });
});
