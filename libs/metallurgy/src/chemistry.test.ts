import { describe, expect, it } from 'vitest';
import {
  ELEMENTS,
  adiMatrixCarbonWtPct,
  carbonMoleFractionFromWtPct,
  carbonWtPctFromMoleFraction,
  checkChemistry,
  siteFractions,
  toMoleFractions,
} from './chemistry.js';

const errorsOf = (r: ReturnType<typeof checkChemistry>) => r.issues.filter((i) => i.severity === 'error');
const warningsOf = (r: ReturnType<typeof checkChemistry>) => r.issues.filter((i) => i.severity === 'warning');

describe('checkChemistry – errors name the field and what is wrong', () => {
  it('accepts a plain low-alloy steel without errors and returns the typed chemistry', () => {
    const r = checkChemistry({ C: 0.4, Si: 0.25, Mn: 0.7, Ni: 1.8, Cr: 0.8, Mo: 0.25 }, 'steel');
    expect(errorsOf(r)).toEqual([]);
    expect(r.chemistry).toEqual({ C: 0.4, Si: 0.25, Mn: 0.7, Ni: 1.8, Cr: 0.8, Mo: 0.25 });
  });

  it.each([
    [null, 'null'],
    [[0.4], 'an array'],
    ['C=0.4', 'string'],
    [42, 'number'],
    [undefined, 'undefined'],
  ])('rejects a non-object %j', (input, got) => {
    const r = checkChemistry(input, 'steel');
    expect(r.chemistry).toBeNull();
    expect(errorsOf(r)).toHaveLength(1);
    expect(errorsOf(r)[0].field).toBe('chemistryWtPct');
    expect(errorsOf(r)[0].message).toContain(got);
  });

  it('rejects an unknown element, naming it', () => {
    const r = checkChemistry({ C: 0.4, Xx: 1 }, 'steel');
    expect(r.chemistry).toBeNull();
    expect(errorsOf(r)).toEqual([expect.objectContaining({ field: 'chemistryWtPct.Xx', message: expect.stringContaining("unknown element 'Xx'") })]);
  });

  it('suggests the right case for a mis-cased symbol', () => {
    const r = checkChemistry({ C: 0.4, mn: 0.7 }, 'steel');
    expect(errorsOf(r)[0]).toMatchObject({ field: 'chemistryWtPct.mn', message: expect.stringContaining("did you mean 'Mn'") });
  });

  it('rejects Fe (the balance)', () => {
    const r = checkChemistry({ C: 0.4, Fe: 98 }, 'steel');
    expect(errorsOf(r)[0]).toMatchObject({ field: 'chemistryWtPct.Fe', message: expect.stringContaining('balance') });
  });

  it.each([
    ['0.7', 'got string'],
    [null, 'got null'],
    [Number.NaN, 'NaN'],
    [Number.POSITIVE_INFINITY, 'finite'],
    [-0.1, 'negative'],
    [120, 'exceed 100'],
  ])('rejects Mn = %j with its own message', (value, fragment) => {
    const r = checkChemistry({ C: 0.4, Mn: value }, 'steel');
    expect(r.chemistry).toBeNull();
    const errs = errorsOf(r);
    expect(errs).toHaveLength(1);
    expect(errs[0].field).toBe('chemistryWtPct.Mn');
    expect(errs[0].message).toContain(fragment);
  });

  it('reports every bad field, each under its own path', () => {
    const r = checkChemistry({ C: 'x', Mn: -1, Si: Number.NaN, Foo: 1 }, 'steel');
    expect(errorsOf(r).map((e) => e.field).sort()).toEqual(['chemistryWtPct.C', 'chemistryWtPct.Foo', 'chemistryWtPct.Mn', 'chemistryWtPct.Si']);
  });

  it('rejects a sum above 100 wt%', () => {
    const r = checkChemistry({ C: 1, Cr: 60, Ni: 45 }, 'steel');
    expect(errorsOf(r)).toContainEqual(expect.objectContaining({ field: 'chemistryWtPct', message: expect.stringContaining('106') }));
  });

  it('requires carbon', () => {
    const r = checkChemistry({ Mn: 0.7 }, 'steel');
    expect(errorsOf(r)).toEqual([expect.objectContaining({ field: 'chemistryWtPct.C', message: expect.stringContaining('required') })]);
  });

  it('rejects cast-iron carbon for a steel and steel carbon for a ductile iron', () => {
    // ≈2.1 wt% C is the maximum solubility of carbon in austenite (handbook Fe–C diagram; §8.1 2.05 wt% [C]).
    expect(errorsOf(checkChemistry({ C: 3.6, Si: 2.5 }, 'steel'))[0].field).toBe('chemistryWtPct.C');
    expect(errorsOf(checkChemistry({ C: 0.4 }, 'ductile-iron'))[0].field).toBe('chemistryWtPct.C');
    expect(errorsOf(checkChemistry({ C: 3.6, Si: 2.5, Mn: 0.3 }, 'ductile-iron'))).toEqual([]);
  });
});

describe('checkChemistry – warnings name the model whose fitted range is left (never clamps)', () => {
  it('warns that Andrews linear Ms is fitted for C ≤ 0.6 and keeps the value', () => {
    const r = checkChemistry({ C: 0.8, Mn: 0.75, Si: 0.25 }, 'steel');
    expect(r.chemistry?.C).toBe(0.8);
    expect(warningsOf(r).map((w) => w.message)).toContainEqual(expect.stringContaining('Ms (Andrews linear / Kung–Rayment) is fitted for C ≤ 0.6 wt%'));
    expect(warningsOf(r).map((w) => w.message)).toContainEqual(expect.stringContaining('Ae3 (Andrews/Grange) is only meaningful for hypoeutectoid'));
  });

  it('warns about KV Bs for high Si, T0′ model dependence for high Mn, and missing Al parameters', () => {
    const r = checkChemistry({ C: 0.43, Si: 2.12, Mn: 3, Al: 1 }, 'steel');
    const byField = (f: string) => warningsOf(r).filter((w) => w.field === f).map((w) => w.message).join(' | ');
    expect(byField('chemistryWtPct.Si')).toContain('Kirkaldy–Venugopalan');
    expect(byField('chemistryWtPct.Mn')).toContain('T0′ (CALPHAD) is model-dependent');
    expect(byField('chemistryWtPct.Al')).toContain('no fcc Al–C');
  });

  it('warns that elements without CALPHAD parameters are treated as Fe', () => {
    const r = checkChemistry({ C: 0.3, Co: 1.5 }, 'steel');
    expect(warningsOf(r)).toContainEqual(expect.objectContaining({ field: 'chemistryWtPct.Co', message: expect.stringContaining('treated as Fe') }));
  });

  it('gives no warnings for a mid-carbon low-alloy steel', () => {
    expect(warningsOf(checkChemistry({ C: 0.4, Si: 0.25, Mn: 0.7, Ni: 1.8, Cr: 0.8, Mo: 0.25 }, 'steel'))).toEqual([]);
  });

  it('warns for ductile iron outside the Voigt–Loper Si range and for segregating Mn', () => {
    const r = checkChemistry({ C: 3.5, Si: 1.5, Mn: 0.67 }, 'ductile-iron');
    expect(warningsOf(r).map((w) => w.field)).toEqual(['chemistryWtPct.Si', 'chemistryWtPct.Mn']);
    expect(warningsOf(r)[0].message).toContain('Voigt–Loper');
  });
});

describe('wt% ↔ mole fraction', () => {
  it('converts with the molar masses of the conventions and sums to 1', () => {
    const x = toMoleFractions({ C: 0.4, Mn: 2 });
    const nC = 0.4 / 12.011;
    const nMn = 2 / 54.938;
    const nFe = 97.6 / 55.845;
    expect(x.C).toBeCloseTo(nC / (nC + nMn + nFe), 12);
    expect(x.Mn).toBeCloseTo(nMn / (nC + nMn + nFe), 12);
    expect(Object.values(x).reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
    for (const el of ELEMENTS) expect(x[el]).toBeGreaterThanOrEqual(0);
  });

  it('site fractions: y_i = x_i/(1 − x_C) sum to 1 and y_C = x_C/(1 − x_C)', () => {
    const chem = { C: 0.79, Si: 1.59, Mn: 1.94, Cr: 1.33, Mo: 0.3 };
    const x = toMoleFractions(chem);
    const { yC, y } = siteFractions(chem);
    expect(yC).toBeCloseTo(x.C / (1 - x.C), 12);
    expect(Object.values(y).reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
    expect(y.Mn).toBeCloseTo(x.Mn / (1 - x.C), 12);
    // Fe is the balance: N and B are counted with the substitutional lattice
    expect(siteFractions({ C: 0.2, B: 0.003 }).y.B).toBeGreaterThan(0);
  });

  it('back-converts a carbon mole fraction at fixed substitutional ratios (round trip)', () => {
    const chem = { C: 0.43, Si: 2.12, Mn: 3 };
    // the alloy's own carbon converts back to itself
    expect(carbonWtPctFromMoleFraction(toMoleFractions(chem).C, chem)).toBeCloseTo(0.43, 10);
    for (const w of [0.02, 0.8, 1.5]) expect(carbonWtPctFromMoleFraction(carbonMoleFractionFromWtPct(w, chem), chem)).toBeCloseTo(w, 10);
  });

  it('Fe–C: x_C = 0.0344 ↔ 0.761 wt% and 8.85e−4 ↔ 0.019 wt% (metallurgy.md §8.1 [C]; x printed to 3 figures)', () => {
    expect(Math.abs(carbonWtPctFromMoleFraction(0.0344, { C: 0 }) - 0.761)).toBeLessThan(0.002);
    expect(Math.abs(carbonWtPctFromMoleFraction(8.85e-4, { C: 0 }) - 0.019)).toBeLessThan(0.0005);
  });
});

describe('ADI matrix carbon (Voigt & Loper 1984, coefficients from memory [M], metallurgy.md §4.1)', () => {
  it('reproduces the §4.1 / §8.5 examples [C from the M formula]', () => {
    expect(adiMatrixCarbonWtPct(900, { C: 3.6, Si: 2.5 })).toBeCloseTo(0.768, 3);
    expect(adiMatrixCarbonWtPct(850, { C: 3.6, Si: 2.5 })).toBeCloseTo(0.65, 2);
    expect(adiMatrixCarbonWtPct(950, { C: 3.6, Si: 2.5 })).toBeCloseTo(0.89, 2);
  });

  it('rises with temperature and falls with Si; ignores the bulk carbon', () => {
    expect(adiMatrixCarbonWtPct(920, { C: 3.5, Si: 2.5 })).toBeGreaterThan(adiMatrixCarbonWtPct(880, { C: 3.5, Si: 2.5 }));
    expect(adiMatrixCarbonWtPct(900, { C: 3.5, Si: 2.8 })).toBeLessThan(adiMatrixCarbonWtPct(900, { C: 3.5, Si: 2.2 }));
    expect(adiMatrixCarbonWtPct(900, { C: 3.2, Si: 2.5 })).toBe(adiMatrixCarbonWtPct(900, { C: 3.8, Si: 2.5 }));
  });
});
