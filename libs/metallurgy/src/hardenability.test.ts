import { describe, expect, it } from 'vitest';
import { carbonFactor, idealCriticalDiameter } from './hardenability.js';

describe('ASTM A255 ideal critical diameter', () => {
  // ASTM A255-10(2014) worked example as reproduced in a public hardenability document (metallurgy.md §8.7, [F2]):
  // SAE 4118 mod. 0.22C–0.80Mn–0.18Si–0.10Ni–0.43Cr–0.25Mo–0.10Cu–0.05V; factors 0.119, 3.667, 1.126, 1.036, 1.929,
  // 1.75, 1.04, 1.09; DI = 1.95 in (49.5 mm), ±0.02 in.
  const sae4118 = { C: 0.22, Mn: 0.8, Si: 0.18, Ni: 0.1, Cr: 0.43, Mo: 0.25, Cu: 0.1, V: 0.05 };

  it('reproduces the worked example', () => {
    const di = idealCriticalDiameter(sae4118);
    expect(Math.abs(di.inches - 1.95)).toBeLessThanOrEqual(0.02);
    expect(di.mm).toBeCloseTo(di.inches * 25.4, 9);
    expect(di.outOfRange).toEqual([]);
  });

  it('reproduces each multiplying factor of the worked example (to the 3–4 figures printed)', () => {
    const f = idealCriticalDiameter(sae4118).factors;
    expect(f.C).toBeCloseTo(0.119, 3);
    expect(f.Mn).toBeCloseTo(3.667, 3);
    expect(f.Si).toBeCloseTo(1.126, 3);
    expect(f.Ni).toBeCloseTo(1.036, 3);
    expect(f.Cr).toBeCloseTo(1.929, 3);
    expect(f.Mo).toBeCloseTo(1.75, 3);
    expect(Math.abs(f.Cu - 1.04)).toBeLessThan(0.005);
    expect(Math.abs(f.V - 1.09)).toBeLessThan(0.005);
  });

  it('the carbon factor is continuous across its piecewise ranges (within the printed rounding)', () => {
    for (const c of [0.39, 0.55, 0.65, 0.75]) {
      expect(Math.abs(carbonFactor(c + 1e-9) - carbonFactor(c))).toBeLessThan(0.01);
    }
    // and increasing
    let prev = 0;
    for (let c = 0.05; c <= 0.9; c += 0.01) {
      expect(carbonFactor(c)).toBeGreaterThan(prev);
      prev = carbonFactor(c);
    }
  });

  it('flags compositions outside the factor ranges (high-Si carbide-free steels sit at the Si limit)', () => {
    expect(idealCriticalDiameter({ C: 0.6, Si: 2.2, Mn: 0.8 }).outOfRange.join(' ')).toMatch(/Si 2.2/);
    expect(idealCriticalDiameter({ C: 0.95, Mn: 0.8 }).outOfRange.join(' ')).toMatch(/C 0.95/);
  });
});
