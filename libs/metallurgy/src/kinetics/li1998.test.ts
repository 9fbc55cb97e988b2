import { describe, expect, it } from 'vitest';
import { msC } from '../temperatures.js';
import {
  LI_S_OF_ONE,
  liBainiteStartC,
  liExtentFromSum,
  liIsothermalTimeS,
  liRate,
  liRateAt,
  liS,
} from './li1998.js';

describe('Li 1998 S(X)', () => {
  it('matches the tabulated S(X) values', () => {
    // metallurgy.md §8.4 [C] regression values, computed from the Li 1998 definition of S(X); tolerance 1e−4 relative,
    // or half a unit of the fifth printed decimal where that is larger (the table is rounded).
    const expected: Array<[number, number]> = [
      [0.001, 0.02639],
      [0.01, 0.10434],
      [0.05, 0.26891],
      [0.1, 0.40119],
      [0.5, 1.02588],
      [0.9, 1.65057],
      [0.99, 1.94742],
      [0.999, 2.02538],
      [1, 2.05176],
    ];
    for (const [x, s] of expected) expect(Math.abs(liS(x) - s)).toBeLessThanOrEqual(Math.max(1e-4 * s, 0.5e-5 + 1e-12));
    expect(Math.abs(LI_S_OF_ONE / 2.05176 - 1)).toBeLessThan(1e-5);
  });

  it('agrees with the spline-table limits of the public Li implementation', () => {
    // [F2] github arthursn/transformation-diagrams: S(0.001) = 0.02638507, S(0.999) = 2.02537893.
    expect(liS(0.001)).toBeCloseTo(0.02638507, 6);
    expect(liS(0.999)).toBeCloseTo(2.02537893, 6);
  });

  it('reproduces the ratios Li et al. print', () => {
    // [F1] Li 1998: S(0.01)/S(0.001) ≈ 4 and S(1)/S(0.01) = 19.9 (metallurgy.md computes 3.95 and 19.66: ±2 %).
    expect(liS(0.01) / liS(0.001)).toBeGreaterThan(3.9);
    expect(liS(0.01) / liS(0.001)).toBeLessThan(4.05);
    expect(Math.abs(LI_S_OF_ONE / liS(0.01) / 19.9 - 1)).toBeLessThan(0.02);
  });

  it('is symmetric, S(X) + S(1 − X) = S(1), and grows as X^0.6 near zero', () => {
    for (const x of [0.02, 0.2, 0.37]) expect(liS(x) + liS(1 - x)).toBeCloseTo(LI_S_OF_ONE, 9);
    // near 0 the integrand is x^−0.4, so S ≈ (5/3)·X^0.6
    expect(liS(1e-6) / ((5 / 3) * Math.pow(1e-6, 0.6))).toBeCloseTo(1, 4);
  });

  it('inverts exactly enough for the kinetics (table lookup)', () => {
    let worst = 0;
    for (let i = 1; i < 2000; i++) {
      const x = i / 2000;
      worst = Math.max(worst, Math.abs(liExtentFromSum(liS(x)) - x));
    }
    expect(worst).toBeLessThan(1e-7);
    expect(liExtentFromSum(0)).toBe(0);
    expect(liExtentFromSum(-1)).toBe(0);
    expect(liExtentFromSum(LI_S_OF_ONE)).toBe(1);
    expect(liExtentFromSum(10)).toBe(1);
    // monotonic
    let prev = -1;
    for (let s = 0; s <= 2.06; s += 0.001) {
      const x = liExtentFromSum(s);
      expect(x).toBeGreaterThanOrEqual(prev);
      prev = x;
    }
  });
});

describe('Li 1998 isothermal times', () => {
  // Li Fig. 14 4140 composition (metallurgy.md §8.3), G = 7.
  const c4140 = { C: 0.37, Mn: 0.77, Si: 0.15, Ni: 0.04, Cr: 0.98, Mo: 0.21 };

  it('bainite start by Li eq. 24', () => {
    // metallurgy.md §8.4 [C]: Bs_Li = 546.1 °C for this composition (pure arithmetic).
    expect(liBainiteStartC(c4140)).toBeCloseTo(546.1, 1);
  });

  it('matches the 4140 isothermal test vector', () => {
    // metallurgy.md §8.4 [C]: bainite t(1 %) 4.53/8.11/23.4 s and t(50 %) 44.5/79.8/230 s at 450/400/350 °C. Tolerance
    // 1e−3 relative plus half a unit of the last printed digit (the values are printed to three figures).
    const bainite = liRate('bainite', c4140, 7, liBainiteStartC(c4140));
    const cases: Array<[number, number, number, number, number]> = [
      [450, 4.53, 0.005, 44.5, 0.05],
      [400, 8.11, 0.005, 79.8, 0.05],
      [350, 23.4, 0.05, 230, 0.5],
    ];
    for (const [t, t1, half1, t50, half50] of cases) {
      expect(Math.abs(liIsothermalTimeS(bainite, t, 0.01) - t1)).toBeLessThanOrEqual(1e-3 * t1 + half1);
      expect(Math.abs(liIsothermalTimeS(bainite, t, 0.5) - t50)).toBeLessThanOrEqual(1e-3 * t50 + half50);
    }
    // metallurgy.md §8.4 [C]: ferrite t(1 %) at 600 °C with Ae3 = 780 °C is 74.9 s; pearlite t(1 %) at 600 °C with Ae1 = 720 °C is 59.2 s.
    expect(liIsothermalTimeS(liRate('ferrite', c4140, 7, 780), 600, 0.01)).toBeCloseTo(74.9, 1);
    expect(liIsothermalTimeS(liRate('pearlite', c4140, 7, 720), 600, 0.01)).toBeCloseTo(59.2, 1);
  });

  it('gives no reaction at or above the start temperature, and is faster with a finer grain', () => {
    const b = liRate('bainite', c4140, 7, 546.1);
    expect(liRateAt(b, 546.1)).toBe(0);
    expect(liRateAt(b, 600)).toBe(0);
    expect(liIsothermalTimeS(b, 600, 0.5)).toBe(Infinity);
    const fine = liRate('bainite', c4140, 9, 546.1);
    expect(liRateAt(fine, 400)).toBeGreaterThan(liRateAt(b, 400));
  });

  it('critical cooling rates for a fully martensitic structure (bainite-limited)', () => {
    // Li 1998 Table II [F1]: 4340 6.4 °C/s, 4140 24.8 °C/s (G ≈ 8); metallurgy.md §8.4 [C] reproduces 6.0 and 25.7 °C/s
    // with Li Bs, Kung–Rayment Ms and rate = (1/S(0.01))·∫_{Ms}^{Bs} dT/τ̂_B. Tolerance ±20 %.
    const criticalRate = (chem: Record<string, number>) => {
      const bs = liBainiteStartC(chem);
      const ms = msC(chem, 'kung-rayment');
      const rate = liRate('bainite', chem, 8, bs);
      let integral = 0;
      const steps = 20000;
      const h = (bs - ms) / steps;
      for (let i = 0; i < steps; i++) integral += liRateAt(rate, ms + (i + 0.5) * h) * h;
      return integral / liS(0.01);
    };
    const c4340 = { C: 0.41, Mn: 0.74, Si: 0.25, Ni: 1.72, Cr: 0.77, Mo: 0.27 };
    const c4140T1 = { C: 0.38, Mn: 0.81, Si: 0.28, Ni: 0.11, Cr: 0.98, Mo: 0.22 };
    const r4340 = criticalRate(c4340);
    const r4140 = criticalRate(c4140T1);
    expect(Math.abs(r4340 / 6.0 - 1)).toBeLessThan(0.2);
    expect(Math.abs(r4340 / 6.4 - 1)).toBeLessThan(0.2);
    expect(Math.abs(r4140 / 25.7 - 1)).toBeLessThan(0.2);
    expect(Math.abs(r4140 / 24.8 - 1)).toBeLessThan(0.2);
  });
});
