import { describe, expect, it } from 'vitest';
import type { ChemistryWtPct } from './chemistry.js';
import {
  FORMULAS,
  ae1C,
  ae3C,
  bsC,
  criticalTemperatures,
  formulaInfo,
  msC,
  type BsFormula,
  type MsFormula,
} from './temperatures.js';

// Steels of metallurgy.md §8.3 (compositions as printed there).
const STEELS: Record<string, ChemistryWtPct> = {
  '1080': { C: 0.8, Mn: 0.75, Si: 0.25 },
  '4340': { C: 0.4, Si: 0.25, Mn: 0.7, Ni: 1.8, Cr: 0.8, Mo: 0.25 },
  '52100': { C: 1.0, Mn: 0.35, Si: 0.25, Cr: 1.45 },
  'Fe-0.43C-2.12Si-3Mn': { C: 0.43, Si: 2.12, Mn: 3.0 },
  superbainite: { C: 0.79, Si: 1.59, Mn: 1.94, Cr: 1.33, Mo: 0.3 },
  '4140': { C: 0.37, Mn: 0.77, Si: 0.15, Ni: 0.04, Cr: 0.98, Mo: 0.21 },
};

// metallurgy.md §8.3 "Empirical formulas – regression values [C]" (computed regression values; ±0.5 °C, pure arithmetic).
// Columns: Ac1 (Andrews 723 set), Ac3 (Andrews 910 set; null where the doc prints it as invalid), Ms Andrews linear,
// Ms Kung–Rayment, Ms Steven–Haynes, Ms van Bohemen, Bs Steven–Haynes, Bs KV, Bs Li, Bs van Bohemen.
const TABLE_8_3: Record<string, [number, number | null, number, number, number, number, number, number, number, number]> = {
  '1080': [722.2, null, 177.8, 175.9, 157.0, 216.9, 546.5, 564.8, 564.4, 591.9],
  '4340': [705.9, 773.3, 305.1, 303.2, 298.8, 305.3, 515.6, 524.6, 524.8, 529.9],
  '52100': [751.0, null, 87.8, 85.9, 50.8, 166.1, 427.0, 518.0, 517.5, 507.4],
  'Fe-0.43C-2.12Si-3Mn': [752.6, 871.6, 265.9, 250.0, 258.2, 241.5, 443.9, 367.2, 507.1, 414.6],
  superbainite: [771.0, 810.1, 127.5, 115.6, 93.6, 148.3, 324.1, 365.7, 465.8, 348.4],
  '4140': [735.0, 799.2, 344.9, 343.8, 338.5, 346.8, 573.3, 553.9, 546.1, 581.7],
};

describe('metallurgy.md §8.3 regression values [C] (computed regression values, ±0.5 °C)', () => {
  const MS: MsFormula[] = ['andrews-linear', 'kung-rayment', 'steven-haynes', 'van-bohemen'];
  const BS: BsFormula[] = ['steven-haynes', 'kirkaldy-venugopalan', 'li-1998', 'van-bohemen'];
  for (const [name, row] of Object.entries(TABLE_8_3)) {
    it(name, () => {
      const chem = STEELS[name];
      expect(Math.abs(ae1C(chem, 'andrews-1965') - row[0])).toBeLessThanOrEqual(0.5);
      const ac3 = row[1];
      if (ac3 !== null) expect(Math.abs(ae3C(chem, 'andrews-1965') - ac3)).toBeLessThanOrEqual(0.5);
      const [, , ...msBs] = row;
      MS.forEach((f, i) => expect(Math.abs(msC(chem, f) - msBs[i]), `Ms ${f}`).toBeLessThanOrEqual(0.5));
      BS.forEach((f, i) => expect(Math.abs(bsC(chem, f) - msBs[4 + i]), `Bs ${f}`).toBeLessThanOrEqual(0.5));
    });
  }

  it('1080 Ac3 (Andrews) = 739.6 °C, below its Ac1: invalid for a eutectoid steel (§8.3 [C])', () => {
    expect(Math.abs(ae3C(STEELS['1080']) - 739.6)).toBeLessThanOrEqual(0.5);
  });
});

describe('measured values for sanity checks (metallurgy.md §8.3, from memory [M], ±25 °C)', () => {
  it('1080 Ms ≈ 220 °C with van Bohemen (linear formulas are ≈40 °C low)', () => {
    expect(Math.abs(msC(STEELS['1080']) - 220)).toBeLessThanOrEqual(25);
    expect(msC(STEELS['1080'], 'andrews-linear')).toBeLessThan(msC(STEELS['1080']) - 25);
  });
  it('4340 Ms ≈ 285–300 °C', () => {
    expect(Math.abs(msC(STEELS['4340']) - 292)).toBeLessThanOrEqual(25);
  });
  it('52100 after a normal austenitise (matrix ≈ 0.6–0.7 C) Ms ≈ 245–250 °C – feed the dissolved C', () => {
    expect(Math.abs(msC({ ...STEELS['52100'], C: 0.65 }) - 247)).toBeLessThanOrEqual(25);
    expect(msC(STEELS['52100'])).toBeLessThan(200); // full 1.0 C would be far too low
  });
});

describe('other Ms/Ae formulas, arithmetic against the §1 formulas (hand-evaluated)', () => {
  const c = STEELS['4340'];
  it('Andrews parabolic, Mahieu, Capdevila (K → °C)', () => {
    // 512 − 453·0.4 − 16.9·1.8 + 15·0.8 − 9.5·0.25 + 217·0.16 − 71.5·0.4·0.7 − 67.6·0.4·0.8
    expect(msC(c, 'andrews-parabolic')).toBeCloseTo(512 - 181.2 - 30.42 + 12 - 2.375 + 34.72 - 20.02 - 21.632, 6);
    // 539 − 423·0.4 − 30.4·0.7 − 7.5·0.25
    expect(msC(c, 'mahieu')).toBeCloseTo(539 - 169.2 - 21.28 - 1.875, 6);
    // 764.2 − 302.6·0.4 − 30.6·0.7 − 14.5·0.25 − 8.9·0.8 + 2.4·0.25 − 16.6·1.8 (K)
    expect(msC(c, 'capdevila')).toBeCloseTo(764.2 - 121.04 - 21.42 - 3.625 - 7.12 + 0.6 - 29.88 - 273.15, 6);
  });
  it('Andrews second set and Grange (°F converted) Ae1/Ae3', () => {
    expect(ae1C(c, 'andrews-1965-second-set')).toBeCloseTo(712 - 12.46 - 34.38 + 5.025 + 9.52 + 2.45, 6);
    expect(ae3C(c, 'andrews-1965-second-set')).toBeCloseTo(871 - 254.4 * Math.sqrt(0.4) - 25.56 + 12.925, 6);
    expect(ae1C(c, 'grange-1961')).toBeCloseTo(((1333 - 17.5 + 10 - 46.8 + 33.6 - 32) * 5) / 9, 6);
    expect(ae3C(c, 'grange-1961')).toBeCloseTo(((1570 - 129.2 - 17.5 + 20 - 57.6 - 2.4 - 32) * 5) / 9, 6);
    // extended Andrews Ac3 subtracts 30Mn + 11Cr for 4340
    expect(ae3C(c, 'andrews-1965-extended')).toBeCloseTo(ae3C(c, 'andrews-1965') - 21 - 8.8, 6);
  });
});

describe('properties that hold whatever the coefficients', () => {
  it('van Bohemen Ms falls monotonically as carbon rises and stays finite up to 2 wt% C (carbon-enriched austenite)', () => {
    const base = STEELS['Fe-0.43C-2.12Si-3Mn'];
    let prev = Number.POSITIVE_INFINITY;
    for (let c = 0; c <= 2.0001; c += 0.05) {
      const ms = msC({ ...base, C: c });
      expect(Number.isFinite(ms)).toBe(true);
      expect(ms).toBeLessThan(prev);
      prev = ms;
    }
    // the exponential term saturates: Ms at 2 wt% C stays well above absolute zero, unlike the linear formulas
    expect(msC({ ...base, C: 2 })).toBeGreaterThan(-273.15);
    expect(msC({ ...base, C: 2 }, 'andrews-linear')).toBeLessThan(msC({ ...base, C: 2 }));
  });

  it('alloying lowers Ms and Bs; Si raises Ae1 and Ae3', () => {
    const base: ChemistryWtPct = { C: 0.4 };
    for (const el of ['Mn', 'Ni', 'Cr', 'Mo'] as const) {
      expect(msC({ ...base, [el]: 1 })).toBeLessThan(msC(base));
      expect(bsC({ ...base, [el]: 1 })).toBeLessThan(bsC(base));
    }
    expect(ae1C({ ...base, Si: 1 })).toBeGreaterThan(ae1C(base));
    expect(ae3C({ ...base, Si: 1 })).toBeGreaterThan(ae3C(base));
    expect(ae3C({ C: 0.2 })).toBeGreaterThan(ae3C({ C: 0.5 }));
  });

  it('Bs lies above Ms for ordinary steels', () => {
    for (const chem of Object.values(STEELS)) expect(bsC(chem)).toBeGreaterThan(msC(chem));
  });
});

describe('criticalTemperatures', () => {
  it('returns the defaults (Andrews Ae, van Bohemen Bs/Ms) without warnings for 4340', () => {
    const r = criticalTemperatures(STEELS['4340']);
    expect(r).toEqual({ ae1C: ae1C(STEELS['4340']), ae3C: ae3C(STEELS['4340']), bsC: bsC(STEELS['4340'], 'van-bohemen'), msC: msC(STEELS['4340'], 'van-bohemen'), warnings: [] });
  });

  it('for a hypereutectoid steel reports Ae3 = Ae1 with a warning instead of an Ae3 below Ae1', () => {
    const r = criticalTemperatures(STEELS['52100']);
    expect(r.ae3C).toBe(r.ae1C);
    expect(r.warnings.join(' ')).toContain('falls below Ae1');
    expect(r.warnings.join(' ')).toContain('C ≲ 0.6');
  });
});

describe('FORMULAS', () => {
  it('describes every formula with a source and validity', () => {
    expect(Object.keys(FORMULAS).length).toBe(15);
    for (const info of Object.values(FORMULAS)) {
      expect(info.name.length).toBeGreaterThan(3);
      expect(info.source).toMatch(/\d{4}/);
      expect(info.validity.length).toBeGreaterThan(5);
    }
    expect(formulaInfo('ms', 'van-bohemen').name).toBe('van Bohemen 2012');
  });
  it('fills a reported error only with its provenance: metallurgy.md quotes none, so every value is marked from memory', () => {
    for (const info of Object.values(FORMULAS)) {
      const values = [info.reportedErrorC, info.reportedErrorAe3C ?? null].filter((v) => v !== null);
      if (values.length === 0) expect(info.reportedErrorSource).toMatch(/^none known/);
      else expect(info.reportedErrorSource).toMatch(/FROM MEMORY \[M\]/);
      for (const v of values) expect(v).toBeGreaterThan(0);
    }
    // Andrews 1965 Ac1 / Ac3 standard deviations 11.5 / 16.7 °C – from memory [M], not in metallurgy.md.
    expect(formulaInfo('ae', 'andrews-1965')).toMatchObject({ reportedErrorC: 11.5, reportedErrorAe3C: 16.7 });
    expect(formulaInfo('ms', 'van-bohemen').reportedErrorC).toBeNull();
    expect(() => formulaInfo('bs', 'nope' as BsFormula)).toThrow(/unknown bs formula/);
  });
});
