import { describe, expect, it } from 'vitest';
import type { ChemistryWtPct } from '../chemistry.js';
import { carbonWtPctFromMoleFraction } from '../chemistry.js';
import {
  ALT_SHIFT_K_PER_AT_PCT,
  BAINITE_STORED_ENERGY_J_PER_MOL,
  drivingForce,
  t0CarbonWtPct,
  t0Curve,
  t0MoleFraction,
  t0PrimeCarbonWtPct,
  t0TemperatureC,
} from './t0.js';

const E = BAINITE_STORED_ENERGY_J_PER_MOL;
const xT0 = (chem: ChemistryWtPct, tempC: number, description: 'calphad' | 'alt' = 'calphad') => t0MoleFraction(chem, tempC, { description });
const xT0p = (chem: ChemistryWtPct, tempC: number, description: 'calphad' | 'alt' = 'calphad') =>
  t0MoleFraction(chem, tempC, { storedEnergyJPerMol: E, description });

describe('Fe–C binary T0 / T0′ (metallurgy.md §8.2 [C], computed regression values; ±0.0005 mole fraction)', () => {
  const table: Array<[number, number, number]> = [
    [250, 0.0694, 0.0611],
    [300, 0.0634, 0.0548],
    [350, 0.0571, 0.0483],
    [400, 0.0506, 0.0415],
    [450, 0.0441, 0.0346],
    [500, 0.0374, 0.0276],
  ];
  for (const [T, t0, t0p] of table) {
    it(`${T} °C: x_T0 = ${t0}, x_T0′ = ${t0p}`, () => {
      expect(Math.abs(xT0({ C: 0.4 }, T) - t0)).toBeLessThanOrEqual(0.0005);
      expect(Math.abs(xT0p({ C: 0.4 }, T) - t0p)).toBeLessThanOrEqual(0.0005);
    });
  }
  it('wt% conversion of the 400 °C values: 1.13 / 0.92 wt%', () => {
    expect(t0CarbonWtPct({ C: 0.4 }, 400)).toBeCloseTo(1.13, 2);
    expect(t0PrimeCarbonWtPct({ C: 0.4 }, 400)).toBeCloseTo(0.92, 2);
  });
  it('T0 does not depend on the alloy’s own carbon in Fe–C', () => {
    expect(xT0({ C: 0.1 }, 350)).toBeCloseTo(xT0({ C: 1.0 }, 350), 12);
  });
  it('T0 temperatures of Fe–C: 0.2/0.4/0.6/0.8 C → 735.9/649.2/577.0/509.6 °C; T0′ 633.8/566.3/502.1/438.8 °C ([C], ±1 K)', () => {
    const rows: Array<[number, number, number]> = [
      [0.2, 735.9, 633.8],
      [0.4, 649.2, 566.3],
      [0.6, 577.0, 502.1],
      [0.8, 509.6, 438.8],
    ];
    for (const [c, t0, t0p] of rows) {
      expect(Math.abs(t0TemperatureC({ C: c }, c) - t0)).toBeLessThanOrEqual(1);
      expect(Math.abs(t0TemperatureC({ C: c }, c, { storedEnergyJPerMol: E }) - t0p)).toBeLessThanOrEqual(1);
    }
  });
});

describe('alloying effect at 400 °C, Fe–0.4C–X (metallurgy.md §8.2 [C], CALPHAD §2 with Si option B)', () => {
  // The doc prints 4 decimals; the same parameters must reproduce them to ±0.0002 (rounding + numerics).
  const rows: Array<[string, ChemistryWtPct, number, number]> = [
    ['Fe–0.4C', { C: 0.4 }, 0.0506, 0.0415],
    ['+2 Mn', { C: 0.4, Mn: 2 }, 0.0436, 0.0343],
    ['+2 Ni', { C: 0.4, Ni: 2 }, 0.0463, 0.037],
    ['+1 Cr', { C: 0.4, Cr: 1 }, 0.0509, 0.0415],
    ['+0.5 Mo', { C: 0.4, Mo: 0.5 }, 0.0514, 0.0421],
    ['+2 Si', { C: 0.4, Si: 2 }, 0.051, 0.0418],
  ];
  for (const [name, chem, t0, t0p] of rows) {
    it(`${name}: ${t0} / ${t0p}`, () => {
      expect(Math.abs(xT0(chem, 400) - t0)).toBeLessThanOrEqual(0.0002);
      expect(Math.abs(xT0p(chem, 400) - t0p)).toBeLessThanOrEqual(0.0002);
    });
  }
  it('+2 Si with option A (the alt description without its Mn/Ni/Cr/Mo shift): 0.0494 / 0.0405 ±0.0002', () => {
    // 'alt' = option A + shifts; with no shifting element present it is exactly option A.
    expect(Math.abs(xT0({ C: 0.4, Si: 2 }, 400, 'alt') - 0.0494)).toBeLessThanOrEqual(0.0002);
    expect(Math.abs(xT0p({ C: 0.4, Si: 2 }, 400, 'alt') - 0.0405)).toBeLessThanOrEqual(0.0002);
  });
  it('rough sizes: Mn ≈ −0.0035 and Ni ≈ −0.002 per wt% at 400 °C', () => {
    const base = xT0({ C: 0.4 }, 400);
    expect((xT0({ C: 0.4, Mn: 2 }, 400) - base) / 2).toBeCloseTo(-0.0035, 3);
    expect((xT0({ C: 0.4, Ni: 2 }, 400) - base) / 2).toBeCloseTo(-0.002, 3);
  });
});

// metallurgy.md §8.2 "Named steels" [C]. NOTE: the table is headed "x_T0 / x_T0′", but its FIRST column equals the
// CALPHAD T0′ (400 J/mol) computed with the same parameters that reproduce every other §8.2 value, and its SECOND
// column is the T0′ of the stronger-Mn published description (its 350 °C value for Fe–0.43C–2.12Si–3Mn, 0.0243 ≈
// 0.54 wt%, is the "≈0.54 wt%" of the §8.2 lever-rule example, whose CALPHAD T0′ is "0.86 wt%" = 0.0380 = column 1).
// The table is tested under that reading; the mislabel is reported to the lead.
const NAMED: Array<[string, ChemistryWtPct, [number, number], [number, number], [number, number]]> = [
  ['Fe–0.43C–2.12Si–3.0Mn', { C: 0.43, Si: 2.12, Mn: 3.0 }, [0.0446, 0.0294], [0.038, 0.0243], [0.0313, 0.0192]],
  ['Fe–0.39C–2.05Si–4.08Ni', { C: 0.39, Si: 2.05, Ni: 4.08 }, [0.0455, 0.0397], [0.0389, 0.0325], [0.0321, 0.0255]],
  // composition from memory [M] (Garcia-Mateo et al. 2003 type)
  ['0.79C–1.59Si–1.94Mn–1.33Cr–0.30Mo–0.11V', { C: 0.79, Si: 1.59, Mn: 1.94, Cr: 1.33, Mo: 0.3, V: 0.11 }, [0.0488, 0.0309], [0.0419, 0.0256], [0.0349, 0.0205]],
  ['0.6C–2.0Si–1.2Mn', { C: 0.6, Si: 2.0, Mn: 1.2 }, [0.0508, 0.0431], [0.0443, 0.0358], [0.0376, 0.0294]],
  ['AISI 4340', { C: 0.4, Si: 0.25, Mn: 0.7, Ni: 1.8, Cr: 0.8, Mo: 0.25 }, [0.049, 0.0382], [0.0421, 0.031], [0.0351, 0.0249]],
];

describe('named steels (metallurgy.md §8.2 [C]; see the note on the column labels above)', () => {
  for (const [name, chem, at300, at350, at400] of NAMED) {
    it(`${name}: CALPHAD T0′ = column 1 (±0.0002)`, () => {
      expect(Math.abs(xT0p(chem, 300) - at300[0])).toBeLessThanOrEqual(0.0002);
      expect(Math.abs(xT0p(chem, 350) - at350[0])).toBeLessThanOrEqual(0.0002);
      expect(Math.abs(xT0p(chem, 400) - at400[0])).toBeLessThanOrEqual(0.0002);
    });
    // Fit regression, NOT a validation: these 15 column-2 values are the data the constructed 'alt' shifts were
    // fitted to (thermo/t0.ts). It guards the fit (max residual 0.0019 in x_C, rms 0.0010) against later edits.
    it(`${name}: fit regression of the constructed 'alt' T0′ on its own fitting data, column 2 (±0.002)`, () => {
      expect(Math.abs(xT0p(chem, 300, 'alt') - at300[1])).toBeLessThanOrEqual(0.002);
      expect(Math.abs(xT0p(chem, 350, 'alt') - at350[1])).toBeLessThanOrEqual(0.002);
      expect(Math.abs(xT0p(chem, 400, 'alt') - at400[1])).toBeLessThanOrEqual(0.002);
    });
  }
  it('lever rule for Fe–0.43C–2.12Si–3Mn at 350 °C, s_b = 0.03: CALPHAD T0′ 0.86 wt% → V_b,max 0.52; alt ≈ 0.54 wt% → ≈ 0.22 (§8.2 [C])', () => {
    // The constructed 'alt' gives 0.532 wt% (its fit residual at this point is −0.0005 in x_C ≈ −0.012 wt%), hence a
    // lever of 0.203: the §8.2 "≈ 0.22" is (0.54 − 0.43)/(0.54 − 0.03) = 0.216 rounded, and the lever moves
    // 1.6 per wt% of T0′ here. So ±0.01 wt% and ±0.02 are what this model gives, not a loose band.
    const chem = NAMED[0][1];
    const cal = t0PrimeCarbonWtPct(chem, 350);
    const alt = t0PrimeCarbonWtPct(chem, 350, { description: 'alt' });
    expect(cal).toBeCloseTo(0.86, 2);
    expect((cal - 0.43) / (cal - 0.03)).toBeCloseTo(0.52, 2);
    expect(Math.abs(alt - 0.54)).toBeLessThanOrEqual(0.01);
    expect(Math.abs((alt - 0.43) / (alt - 0.03) - 0.22)).toBeLessThanOrEqual(0.02);
  });
  it('the fitted (constructed) alt shifts are γ-stabilising and stronger for Mn than for Ni per at.%', () => {
    expect(ALT_SHIFT_K_PER_AT_PCT.Mn).toBeGreaterThan(ALT_SHIFT_K_PER_AT_PCT.Ni);
    expect(ALT_SHIFT_K_PER_AT_PCT.Ni).toBeGreaterThan(0);
  });
  it('the alt Mn effect at 400 °C is about twice the CALPHAD one ("other published descriptions give up to about twice that", §8.2)', () => {
    const calMn = xT0({ C: 0.4, Mn: 2 }, 400) - xT0({ C: 0.4 }, 400);
    const altMn = xT0({ C: 0.4, Mn: 2 }, 400, 'alt') - xT0({ C: 0.4 }, 400, 'alt');
    expect(altMn / calMn).toBeGreaterThan(1.5);
    expect(altMn / calMn).toBeLessThan(3);
  });
});

describe('properties that must hold whatever the coefficients', () => {
  const steels: ChemistryWtPct[] = [{ C: 0.4 }, ...NAMED.map((n) => n[1]), { C: 0.25, Si: 1.5, Mn: 2, Cr: 0.5, Al: 0.8 }];
  it('T0 and T0′ carbon rise as the temperature falls (200–600 °C), both descriptions', () => {
    for (const chem of steels) {
      for (const description of ['calphad', 'alt'] as const) {
        let prevT0 = 0;
        let prevT0p = 0;
        for (let T = 600; T >= 200; T -= 25) {
          const a = t0CarbonWtPct(chem, T, { description });
          const b = t0PrimeCarbonWtPct(chem, T, { description });
          expect(a).toBeGreaterThan(prevT0);
          expect(b).toBeGreaterThanOrEqual(prevT0p);
          prevT0 = a;
          prevT0p = b;
        }
      }
    }
  });
  it('T0′ < T0, and a larger stored energy lowers T0′ further', () => {
    for (const chem of steels) {
      for (const T of [250, 350, 450]) {
        const t0 = t0CarbonWtPct(chem, T);
        const t0p = t0PrimeCarbonWtPct(chem, T);
        expect(t0p).toBeLessThan(t0);
        expect(t0PrimeCarbonWtPct(chem, T, { storedEnergyJPerMol: 600 })).toBeLessThan(t0p);
      }
    }
  });
  it('Mn lowers T0; replacing Mn by the same wt% of Ni raises it (both descriptions)', () => {
    for (const description of ['calphad', 'alt'] as const) {
      for (const T of [300, 400]) {
        const base = t0CarbonWtPct({ C: 0.4, Si: 1.5 }, T, { description });
        const mn = t0CarbonWtPct({ C: 0.4, Si: 1.5, Mn: 2 }, T, { description });
        const ni = t0CarbonWtPct({ C: 0.4, Si: 1.5, Ni: 2 }, T, { description });
        expect(mn).toBeLessThan(base);
        expect(ni).toBeGreaterThan(mn);
      }
    }
  });
  it('the Si effect is small: |Δx_T0| < 0.002 per 2 wt% Si (§9.2)', () => {
    // Default description (option B): holds over the whole austempering range.
    for (let T = 200; T <= 550; T += 50) expect(Math.abs(xT0({ C: 0.4, Si: 2 }, T) - xT0({ C: 0.4 }, T))).toBeLessThan(0.002);
    // Option A ('alt'): lowers T0, by 0.0016 at 400 °C (§8.2: 0.0494 vs 0.0510); below ≈350 °C the same parameters
    // give slightly more than 0.002 (−0.0021 at 300 °C, −0.0025 at 250 °C), so the §9.2 bound is checked from 350 °C up
    // and a 0.003 bound below.
    for (let T = 200; T <= 550; T += 50) {
      const d = Math.abs(xT0({ C: 0.4, Si: 2 }, T, 'alt') - xT0({ C: 0.4 }, T, 'alt'));
      expect(d).toBeLessThan(T >= 350 ? 0.002 : 0.003);
    }
  });
  it('ΔG_m^{γ→α} rises monotonically with carbon between 200 and 700 °C (§2.5, the premise of the root finder)', () => {
    for (const chem of steels) {
      for (const T of [200, 450, 700]) {
        const df = drivingForce(chem, T + 273.15);
        let prev = Number.NEGATIVE_INFINITY;
        for (let x = 1e-6; x < 0.2; x += 0.002) {
          const g = df.at(x);
          expect(g).toBeGreaterThan(prev);
          prev = g;
        }
      }
    }
  });
  it('T0′ is 0 where even carbon-free ferrite is not 400 J/mol below austenite (near the pure-iron α/γ point)', () => {
    expect(t0PrimeCarbonWtPct({ C: 0.4 }, 880)).toBe(0);
    expect(t0CarbonWtPct({ C: 0.4 }, 950)).toBe(0);
  });
  it('stays finite and physical down to room temperature (T0′ ≈ 2 wt% at 20 °C for Fe–C)', () => {
    const at20 = t0PrimeCarbonWtPct({ C: 0.4 }, 20);
    expect(at20).toBeGreaterThan(1.5);
    expect(at20).toBeLessThan(2.5);
  });
  it('rejects a non-finite temperature or stored energy instead of returning a number', () => {
    expect(() => t0PrimeCarbonWtPct({ C: 0.4 }, Number.NaN)).toThrow(RangeError);
    expect(() => t0CarbonWtPct({ C: 0.4 }, -300)).toThrow(RangeError);
    expect(() => t0PrimeCarbonWtPct({ C: 0.4 }, 350, { storedEnergyJPerMol: Number.NaN })).toThrow(RangeError);
  });
  it('the root satisfies ΔG_m = −E to < 1e−4 J/mol', () => {
    const chem = NAMED[2][1];
    const x = xT0p(chem, 320);
    expect(Math.abs(drivingForce(chem, 593.15).at(x) + E)).toBeLessThan(1e-4);
  });
});

describe('t0Curve', () => {
  it('lists both limits over the range and agrees with the single-point functions', () => {
    const chem = NAMED[3][1];
    const curve = t0Curve(chem, 250, 450, 50);
    expect(curve.map((p) => p.tempC)).toEqual([250, 300, 350, 400, 450]);
    for (const p of curve) {
      expect(p.t0CarbonWtPct).toBeCloseTo(t0CarbonWtPct(chem, p.tempC), 6);
      expect(p.t0PrimeCarbonWtPct).toBeCloseTo(t0PrimeCarbonWtPct(chem, p.tempC), 6);
    }
    expect(t0Curve(chem, 400, 300, 50).map((p) => p.tempC)).toEqual([400, 350, 300]);
    expect(t0Curve(chem, 300, 300, 10, { storedEnergyJPerMol: 600 })[0].t0PrimeCarbonWtPct).toBeCloseTo(
      t0PrimeCarbonWtPct(chem, 300, { storedEnergyJPerMol: 600 }),
      6,
    );
    expect(() => t0Curve(chem, 300, 400, 0)).toThrow(RangeError);
  });
  it('wt% values use the alloy’s substitutional molar mass (conventions back-conversion)', () => {
    const chem = NAMED[0][1];
    expect(t0CarbonWtPct(chem, 350)).toBeCloseTo(carbonWtPctFromMoleFraction(xT0(chem, 350), chem), 10);
  });
});
