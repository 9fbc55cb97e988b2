import { describe, expect, it } from 'vitest';
import { finalMicrostructure, koistinenMarburger, msSubstitutionalC, vanBohemenAlphaPerK, vanBohemenAlphaSubstitutionalPerK, vanBohemenCarbonTermC } from './finalState.js';
import { msC } from './temperatures.js';

const c4340 = { C: 0.4, Si: 0.25, Mn: 0.7, Ni: 1.8, Cr: 0.8, Mo: 0.25 };

describe('Koistinen–Marburger', () => {
  it('gives the check value of metallurgy.md §8.3', () => {
    // [C] metallurgy.md §8.3 "KM check": α = 0.011, Ms − T_q = 100 K → f_M = 0.667.
    expect(koistinenMarburger(300, 200, 0.011)).toBeCloseTo(0.667, 3);
    expect(koistinenMarburger(200, 250)).toBe(0);
  });

  it('retained austenite of 4340 quenched to 20 °C', () => {
    // [C] metallurgy.md §8.3: with van Bohemen Ms (305.3 °C) and α_m (0.01761 /K) RA = 0.0066; with α = 0.011 it is 0.043.
    const ms = msC(c4340, 'van-bohemen');
    expect(ms).toBeCloseTo(305.3, 1);
    const alpha = vanBohemenAlphaPerK(c4340, c4340.C);
    expect(alpha).toBeCloseTo(0.01761, 5);
    expect(1 - koistinenMarburger(ms, 20, alpha)).toBeCloseTo(0.0066, 4);
    expect(1 - koistinenMarburger(ms, 20, 0.011)).toBeCloseTo(0.043, 3);
  });

  it('the split van Bohemen Ms equals the formula in temperatures.ts', () => {
    for (const c of [0, 0.4, 0.9, 1.3]) {
      expect(msSubstitutionalC(c4340) - vanBohemenCarbonTermC(c)).toBeCloseTo(msC({ ...c4340, C: c }, 'van-bohemen'), 9);
      expect(vanBohemenAlphaSubstitutionalPerK(c4340) - 19.8e-3 * (1 - Math.exp(-1.56 * c))).toBeCloseTo(vanBohemenAlphaPerK(c4340, c), 12);
    }
  });
});

describe('final microstructure', () => {
  const chem = { C: 0.6, Si: 1.6, Mn: 0.8 };
  const base = {
    upperProducts: 0,
    bathMartensite: 0,
    carbonWtPct: 0.6,
    carbonInBainiticFerriteWtPct: 0.03,
    filmCoefficient: 0.15,
    msSubstitutionalC: msSubstitutionalC(chem),
    alphaSubstitutionalPerK: vanBohemenAlphaSubstitutionalPerK(chem),
    alphaFactor: 1,
    ambientC: 20,
  };

  it('fractions add up to one and carbon is conserved', () => {
    for (const v of [0, 0.2, 0.5, 0.8]) {
      const f = finalMicrostructure({ ...base, upperProducts: 0.03, bainitePoolFraction: v });
      const total = f.bainiticFerrite + f.filmAustenite + f.blockyAustenite + f.freshMartensite + f.upperProducts + f.bathMartensite;
      expect(total).toBeCloseTo(1, 12);
      // §5.1 mass balance over the pool: C̄·A = V_b·s_b + V_γ·C_γ
      const pool = 0.97;
      const austenite = pool - f.bainiticFerrite;
      expect(f.bainiticFerrite * 0.03 + austenite * f.austeniteCarbonWtPct).toBeCloseTo(0.6 * pool, 12);
    }
  });

  it('more bainite enriches the austenite, lowers its Ms and the fresh martensite', () => {
    const low = finalMicrostructure({ ...base, bainitePoolFraction: 0.3 });
    const high = finalMicrostructure({ ...base, bainitePoolFraction: 0.6 });
    expect(high.austeniteCarbonWtPct).toBeGreaterThan(low.austeniteCarbonWtPct);
    expect(high.residualAusteniteMsC).toBeLessThan(low.residualAusteniteMsC);
    expect(high.freshMartensite).toBeLessThan(low.freshMartensite);
    expect(high.filmToBlockyRatio as number).toBeGreaterThan(low.filmToBlockyRatio as number);
  });

  it('films are 0.15 of the bainite (Bhadeshia & Edmonds 1983, coefficient from memory) and never form martensite', () => {
    const f = finalMicrostructure({ ...base, bainitePoolFraction: 0.5 });
    expect(f.filmAustenite).toBeCloseTo(0.075, 12);
    expect(f.blockyAtHoldEnd).toBeCloseTo(0.5 - 0.075, 12);
    expect(f.blockyAustenite + f.freshMartensite).toBeCloseTo(f.blockyAtHoldEnd, 12);
  });

  it('no blocky austenite gives no ratio (null) rather than a division by zero', () => {
    const f = finalMicrostructure({ ...base, filmCoefficient: 1, bainitePoolFraction: 0.6 });
    expect(f.filmToBlockyRatio).toBeNull();
    expect(f.freshMartensite).toBe(0);
  });
});
