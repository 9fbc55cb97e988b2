import { describe, expect, it } from 'vitest';
import { erfc, normalCdf, normalPdf, normalSf } from './normal.js';
import { createSeededRandom } from './random.js';

describe('standard normal Φ', () => {
  it('matches tabulated values of the standard normal distribution', () => {
    // Reference values: Abramowitz & Stegun Table 26.1 / any 15-digit normal table (from memory, to the
    // digits shown; they are the standard textbook anchors).
    expect(normalCdf(0)).toBe(0.5);
    expect(normalCdf(1)).toBeCloseTo(0.841344746068543, 14);
    expect(normalCdf(1.96)).toBeCloseTo(0.975002104851780, 14);
    expect(normalCdf(-3) / 0.00134989803163009).toBeCloseTo(1, 12);
    expect(normalSf(6) / 9.86587645037698e-10).toBeCloseTo(1, 10);
    // erfc(3) = 2.20904969985854e-5 (A&S Table 7.1, from memory); the junction of series and continued fraction.
    expect(erfc(3) / 2.20904969985854e-5).toBeCloseTo(1, 9);
  });

  it('keeps relative precision in the far tail (continued fraction) and is continuous at the junction', () => {
    // Φ(−8) = 6.22096057427178e-16 (standard table, from memory).
    expect(normalCdf(-8) / 6.22096057427178e-16).toBeCloseTo(1, 10);
    const z = 3 * Math.SQRT2; // the series / continued-fraction switch
    expect(Math.abs(normalCdf(-z + 1e-9) - normalCdf(-z - 1e-9))).toBeLessThan(1e-12);
  });

  it('is a distribution: symmetric, monotone, derivative equal to the density', () => {
    for (let z = -7; z <= 7; z += 0.37) {
      expect(normalCdf(z) + normalCdf(-z)).toBeCloseTo(1, 15);
      expect(normalCdf(z + 0.01)).toBeGreaterThan(normalCdf(z));
      const dz = 1e-5;
      expect((normalCdf(z + dz) - normalCdf(z - dz)) / (2 * dz)).toBeCloseTo(normalPdf(z), 8);
    }
  });
});

describe('seeded xoshiro128** generator', () => {
  it('is deterministic per seed and differs between seeds', () => {
    const a = createSeededRandom(42);
    const b = createSeededRandom(42);
    const c = createSeededRandom(43);
    const sa = Array.from({ length: 5 }, () => a.nextUint32());
    expect(Array.from({ length: 5 }, () => b.nextUint32())).toEqual(sa);
    expect(Array.from({ length: 5 }, () => c.nextUint32())).not.toEqual(sa);
  });

  it('gives uniforms strictly inside (0, 1) and normals with mean 0 and variance 1', () => {
    const rng = createSeededRandom(2024);
    const n = 200_000;
    let s = 0;
    let ss = 0;
    let beyond3 = 0;
    let uMin = 1;
    let uMax = 0;
    for (let i = 0; i < n; i++) {
      const u = rng.nextUniform();
      uMin = Math.min(uMin, u);
      uMax = Math.max(uMax, u);
      const x = rng.nextNormal();
      s += x;
      ss += x * x;
      if (Math.abs(x) > 3) beyond3++;
    }
    expect(uMin).toBeGreaterThan(0);
    expect(uMax).toBeLessThan(1);
    const mean = s / n;
    const variance = ss / n - mean * mean;
    // Standard errors: mean 1/√n = 0.0022, variance √(2/n) = 0.0032; allow 4 SE.
    expect(Math.abs(mean)).toBeLessThan(0.009);
    expect(Math.abs(variance - 1)).toBeLessThan(0.013);
    // P(|Z| > 3) = 0.0027 → expect 540 ± 23 of 200 000; allow 4 SE.
    expect(Math.abs(beyond3 - 540)).toBeLessThan(95);
  });
});
