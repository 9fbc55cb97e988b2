import { describe, expect, it } from 'vitest';
import type { PredictInput } from './input.js';
import { advanceBath, createBathState } from './kinetics/bath.js';
import { batchModel } from './ensemble.js';
import { finalizeBatch, predict, type PredictOutput } from './predict.js';
import { BAND_QUANTITIES } from './setup.js';
import { defaultFormulaErrorsC, temperatureBands } from './temperatureBands.js';

function bath(durationS: number, temp: (t: number) => number, stepS = 5): Array<[number, number]> {
  const out: Array<[number, number]> = [];
  for (let t = 0; t <= durationS; t += stepS) out.push([t, temp(t)]);
  return out;
}

function steel(overrides: Partial<PredictInput> = {}): PredictInput {
  return {
    material: 'steel',
    chemistryWtPct: { C: 0.6, Si: 1.6, Mn: 0.8, Cr: 0.5, Mo: 0.2 },
    grainSizeAstm: 8,
    section: { shape: 'cylinder', diameterMm: 8 },
    austenitize: { tempC: 880, minutes: 20 },
    transferS: 5,
    agitation: 'strong',
    ambientC: 20,
    uncertainty: { samples: 120, seed: 9 },
    bath: bath(3 * 3600, () => 300),
    ...overrides,
  };
}

const isBand = (b: unknown) => {
  expect(b).toEqual({ p05: expect.any(Number), p50: expect.any(Number), p95: expect.any(Number) });
  const { p05, p50, p95 } = b as { p05: number; p50: number; p95: number };
  expect(p05).toBeLessThanOrEqual(p50);
  expect(p50).toBeLessThanOrEqual(p95);
};

describe('predict', () => {
  const out = predict(steel());

  it('returns every documented field', () => {
    expect(typeof out.modelVersion).toBe('string');
    for (const k of ['ae1', 'ae3', 'bs', 'ms'] as const) expect(Number.isFinite(out.temperaturesC[k])).toBe(true);
    expect(out.t0.bathTempC).toBeCloseTo(300, 6);
    expect(out.t0.t0CarbonWtPct).toBeGreaterThan(out.t0.t0PrimeCarbonWtPct);
    expect(out.bainite.ceilingFraction).toBeGreaterThan(0);
    expect(out.bainite.fractionAtEnd).toBeLessThanOrEqual(out.bainite.ceilingFraction + 1e-9);
    expect(out.bainite.timeTo95PctS).toEqual(expect.any(Number));
    expect(out.bainite.curve[0]).toEqual([0, 0]);
    expect(out.bainite.curve[out.bainite.curve.length - 1]).toEqual([3 * 3600, out.bainite.fractionAtEnd]);
    for (const key of ['upperProductsFraction', 'coreReachesBathS', 'idealCriticalDiameterMm'] as const) expect(out.quench[key]).toEqual(expect.any(Number));
    const f = out.final;
    for (const key of ['bainiticFerrite', 'filmAustenite', 'blockyAustenite', 'freshMartensite', 'upperProducts', 'austeniteCarbonWtPct', 'residualAusteniteMsC'] as const) {
      expect(f[key]).toEqual(expect.any(Number));
    }
    expect(f.bainiticFerrite + f.filmAustenite + f.blockyAustenite + f.freshMartensite + f.upperProducts + f.bathMartensite).toBeCloseTo(1, 3);
    isBand(out.properties.hardnessHV);
    isBand(out.properties.tensileMPa);
    expect(out.properties.adiGrade).toBeUndefined();
    expect(Array.isArray(out.warnings)).toBe(true);
    for (const q of BAND_QUANTITIES) expect(out.bands[q]).toHaveProperty('p50');
    // retained austenite = films + blocky per member (ordered band; without an ensemble it is the nominal sum)
    const ra = out.bands.retainedAusteniteFraction;
    expect(ra.p05 as number).toBeLessThanOrEqual(ra.p50 as number);
    expect(ra.p50 as number).toBeLessThanOrEqual(ra.p95 as number);
    const single = predict(steel({ uncertainty: { samples: 0, seed: 1 } }));
    expect(single.bands.retainedAusteniteFraction.p50).toBeCloseTo(single.final.filmAustenite + single.final.blockyAustenite, 3);
    // fractions are volume fractions between 0 and 1
    for (const v of [out.bainite.ceilingFraction, out.bainite.fractionAtEnd, out.quench.upperProductsFraction, ...Object.values(f).slice(0, 6)]) {
      expect(v).toBeGreaterThanOrEqual(0);
      expect(v).toBeLessThanOrEqual(1);
    }
  });

  it('the austenite carbon at completion is the T0′ carbon (the lever rule closes on itself)', () => {
    // complete transformation: C_γ = (C̄ − V_b·s_b)/(1 − V_b) with V_b at the ceiling equals C_T0′ (metallurgy.md §3.4/§5.1)
    const pool = 1 - out.final.upperProducts;
    expect(out.bainite.fractionAtEnd / pool).toBeCloseTo(out.bainite.ceilingFraction / pool, 3);
    expect(out.final.austeniteCarbonWtPct).toBeCloseTo(out.t0.t0PrimeCarbonWtPct, 2);
  });

  it('the same seed gives the same bands; another seed other bands', () => {
    const again = predict(steel());
    expect(again.bands).toEqual(out.bands);
    const other = predict(steel({ uncertainty: { samples: 120, seed: 10 } }));
    expect(other.bands.hardnessHV).not.toEqual(out.bands.hardnessHV);
  });

  it('more carbon lowers the ceiling', () => {
    const lowC = predict(steel({ chemistryWtPct: { C: 0.5, Si: 1.6, Mn: 0.8, Cr: 0.5, Mo: 0.2 }, uncertainty: { samples: 0, seed: 1 } }));
    const highC = predict(steel({ chemistryWtPct: { C: 0.7, Si: 1.6, Mn: 0.8, Cr: 0.5, Mo: 0.2 }, uncertainty: { samples: 0, seed: 1 } }));
    expect(highC.bainite.ceilingFraction).toBeLessThan(lowC.bainite.ceilingFraction);
  });

  it('a lower bath temperature above Ms raises the ceiling', () => {
    const ms = out.temperaturesC.ms;
    const cooler = predict(steel({ bath: bath(3600, () => ms + 20), uncertainty: { samples: 0, seed: 1 } }));
    const warmer = predict(steel({ bath: bath(3600, () => ms + 120), uncertainty: { samples: 0, seed: 1 } }));
    expect(cooler.bainite.ceilingFraction).toBeGreaterThan(warmer.bainite.ceilingFraction);
    expect(cooler.final.bathMartensite).toBe(0);
  });

  it('a bath below Ms forms martensite on entry and says so', () => {
    const ms = out.temperaturesC.ms;
    const below = predict(steel({ bath: bath(1800, () => ms - 40), uncertainty: { samples: 0, seed: 1 } }));
    expect(below.final.bathMartensite).toBeGreaterThan(0.1);
    expect(below.warnings.join('\n')).toMatch(/below Ms/);
  });

  it('warns (common practice) when Si + Al is too low to keep cementite out', () => {
    // Trade rule of thumb (common practice): 1–2 wt% Si keeps cementite out of the enriched austenite (metallurgy.md §5.3).
    const low = predict(steel({ chemistryWtPct: { C: 0.6, Si: 0.25, Mn: 0.8, Cr: 0.5, Mo: 0.2 }, uncertainty: { samples: 0, seed: 1 } }));
    expect(low.warnings.some((w) => /common practice/.test(w) && /Si \+ Al/.test(w))).toBe(true);
    expect(out.warnings.some((w) => /Si \+ Al/.test(w))).toBe(false);
  });

  it('a short hold warns of incomplete transformation and leaves more blocky austenite and fresh martensite', () => {
    const short = predict(steel({ bath: bath(900, () => 300), uncertainty: { samples: 0, seed: 1 } }));
    expect(short.warnings.join('\n')).toMatch(/incomplete transformation/);
    expect(short.final.blockyAustenite + short.final.freshMartensite).toBeGreaterThan(out.final.blockyAustenite + out.final.freshMartensite);
    expect(short.bainite.timeTo95PctS).toBeNull();
  });

  it('calibration: a band bias shifts the band, a time factor slows the kinetics', () => {
    const calibrated = predict(steel({ calibration: { bands: { hardnessHV: { bias: 25 } } } }));
    expect(calibrated.bands.hardnessHV.p50).toBeCloseTo((out.bands.hardnessHV.p50 as number) + 25, 0);
    expect(calibrated.bands.bainiticFerrite).toEqual(out.bands.bainiticFerrite);
    const slow = predict(steel({ bath: bath(3600, () => 300), calibration: { bainiteTimeFactor: 3 }, uncertainty: { samples: 0, seed: 1 } }));
    const normal = predict(steel({ bath: bath(3600, () => 300), uncertainty: { samples: 0, seed: 1 } }));
    expect(slow.bainite.fractionAtEnd).toBeLessThan(normal.bainite.fractionAtEnd);
    // spread: a calibration sd widens the band
    const spread = predict(steel({ calibration: { bands: { hardnessHV: { sd: 40 } } } }));
    const width = (o: PredictOutput) => (o.bands.hardnessHV.p95 as number) - (o.bands.hardnessHV.p05 as number);
    expect(width(spread)).toBeGreaterThan(width(out));
  });

  it("calibration: the product's own scatter replaces the generic model errors; the nominal is unchanged", () => {
    // Our construction (setup.ts Calibration): a calibrated spread narrows the band it replaces, leaves the point values.
    const width = (o: PredictOutput, q: keyof PredictOutput['bands']) => (o.bands[q].p95 as number) - (o.bands[q].p05 as number);
    const tight = predict(steel({ calibration: { bainiteTimeLnSd: 0.1, ferritePearliteTimeLnSd: 0.1, t0PrimeSdWtPct: 0.01, hardnessLnSd: 0.01 } }));
    expect(tight.bainite.timeTo95PctS).toBe(out.bainite.timeTo95PctS);
    expect(tight.quench.upperProductsFraction).toBe(out.quench.upperProductsFraction);
    expect(tight.final).toEqual(out.final);
    expect(width(tight, 'timeTo95PctS')).toBeLessThan(0.6 * width(out, 'timeTo95PctS'));
    expect(width(tight, 'upperProductsFraction')).toBeLessThan(0.5 * width(out, 'upperProductsFraction'));
    expect(width(tight, 'ceilingFraction')).toBeLessThan(0.5 * width(out, 'ceilingFraction'));
    expect(width(tight, 'hardnessHV')).toBeLessThan(0.6 * width(out, 'hardnessHV'));
    // the calibrated T0′ is the CALPHAD one (plus bias): the band is centred on the nominal, not pulled down by 'alt'
    expect(tight.bands.t0PrimeCarbonWtPct.p50).toBeCloseTo(out.t0.t0PrimeCarbonWtPct, 1);
    // a hardness factor scales the nominal hardness (and the tensile estimate with it)
    const one = { samples: 0, seed: 1 };
    const plain = predict(steel({ uncertainty: one }));
    const softer = predict(steel({ uncertainty: one, calibration: { hardnessFactor: 0.9 } }));
    expect(softer.properties.hardnessHV.p50).toBeCloseTo(0.9 * (plain.properties.hardnessHV.p50 as number), 0);
    expect(softer.properties.tensileMPa.p50).toBeCloseTo(0.9 * (plain.properties.tensileMPa.p50 as number), -1);
    expect(softer.warnings.join('\n')).toMatch(/hardness is scaled by the per-product calibration factor 0.9/);
  });

  it('finalizing a state advanced in slices gives the same prediction as predict()', () => {
    const input = steel();
    const { bath: log, ...setup } = input;
    let state = createBathState(setup);
    for (let i = 0; i < log.length; i += 37) state = advanceBath(state, log.slice(i, i + 37));
    expect(finalizeBatch(state)).toEqual(out);
  });

  it('finalize refuses an empty state', () => {
    const { bath: _unused, ...setup } = steel();
    expect(() => finalizeBatch(createBathState(setup))).toThrow(/no samples/);
  });
});

describe('predict for austempered ductile iron', () => {
  const adi = predict({
    material: 'ductile-iron',
    chemistryWtPct: { C: 3.6, Si: 2.5, Mn: 0.3, Cu: 0.6, Ni: 0.8, Mo: 0.2 },
    grainSizeAstm: 7,
    section: { shape: 'plate', thicknessMm: 6 },
    austenitize: { tempC: 900, minutes: 90 },
    transferS: 5,
    agitation: 'strong',
    ambientC: 20,
    uncertainty: { samples: 100, seed: 3 },
    calibration: { ferritePearliteTimeFactor: 10 },
    bath: bath(2 * 3600, () => 360),
  });

  it('uses the matrix carbon, reports an A897 grade (or null) and ADI warnings', () => {
    // matrix carbon 900/420 − 0.17·2.5 − 0.95 = 0.768 wt% (Voigt–Loper, from memory) enters via the T0′ lever
    expect(adi.material).toBe('ductile-iron');
    expect(adi.properties).toHaveProperty('adiGrade');
    expect(adi.properties.adiGrade === null || /^\d+\/\d+\/\d+$/.test(adi.properties.adiGrade as string)).toBe(true);
    expect(adi.warnings.join('\n')).toMatch(/not cast iron/);
    expect(adi.final.bainiticFerrite).toBeGreaterThan(0.05);
  });

  it('says the grade is inferred from predicted hardness via the A897 table, not measured', () => {
    const note = adi.warnings.filter((w) => w.startsWith('properties.adiGrade: grade inferred from predicted hardness via the A897 table'));
    expect(note).toHaveLength(1);
    expect(note[0]).toMatch(/not a measurement/);
  });

  it('no A255 grain-size note at grain size 7, the basis of the factors', () => {
    expect(adi.warnings.some((w) => w.startsWith('quench.idealCriticalDiameterMm: computed for ASTM grain size 7'))).toBe(false);
  });
});

describe('ideal critical diameter and grain size (ASTM A255 factors are for grain size 7, metallurgy.md §7.1)', () => {
  it('warns that the setup grain size is not applied, and leaves DI unchanged', () => {
    const g8 = predict(steel({ uncertainty: { samples: 10, seed: 1 } }));
    const g7 = predict(steel({ grainSizeAstm: 7, uncertainty: { samples: 10, seed: 1 } }));
    expect(g8.warnings).toContain(
      "quench.idealCriticalDiameterMm: computed for ASTM grain size 7 (the A255 factors' basis); the setup's grain size 8 is not applied (the A255 grain-size carbon factors are not in our sources)",
    );
    expect(g7.warnings.some((w) => w.startsWith('quench.idealCriticalDiameterMm:'))).toBe(false);
    expect(g8.quench.idealCriticalDiameterMm).toBe(g7.quench.idealCriticalDiameterMm);
  });
});

/** A short isothermal bath: the temperature bands depend on the setup only. */
const quick = (samples: number, seed: number) => steel({ uncertainty: { samples, seed }, bath: bath(1800, () => 300, 600) });
const setupOf = (input: PredictInput) => {
  const { bath: _unused, ...setup } = input;
  return setup;
};

describe('temperatureBandsC (reported formula errors + chemistry tolerance)', () => {
  it('takes each default formula’s reported error where one is known, and says what it assumed otherwise', () => {
    const e = defaultFormulaErrorsC();
    // Andrews 1965 Ac1/Ac3: 11.5 / 16.7 °C, from memory [M] (temperatures.ts FORMULAS)
    expect(e.ae1).toMatchObject({ sdC: 11.5 });
    expect(e.ae3).toMatchObject({ sdC: 16.7 });
    expect(e.ae1.basis).toMatch(/^reported error: FROM MEMORY \[M\]/);
    // van Bohemen 2012 Bs / Ms: no reported error known → the ensemble's own Bs / Ms errors, marked as our assumption
    expect(e.bs).toMatchObject({ sdC: 25 });
    expect(e.ms).toMatchObject({ sdC: 15 });
    expect(e.bs.basis).toMatch(/^our assumption/);
    expect(e.ms.basis).toMatch(/^our assumption/);
  });

  it('p50 sits on the nominal temperature and the 90 % width matches the combined 1σ (Latin hypercube, 2000 samples)', () => {
    const out = predict(quick(2000, 5));
    const b = out.temperatureBandsC;
    for (const q of ['ae1', 'ae3', 'bs', 'ms'] as const) {
      expect(b[q].p05).toBeLessThan(b[q].p50);
      expect(b[q].p50).toBeLessThan(b[q].p95);
      expect(Math.abs(b[q].p50 - out.temperaturesC[q])).toBeLessThan(1);
    }
    // Andrews Ac1 is linear: 723 − 10.7Mn + 29.1Si + 16.9Cr, chemistry sd Mn 0.03, Si 0.04, Cr 0.03 (ensemble.ts);
    // expected 1σ = √(11.5² + (10.7·0.03)² + (29.1·0.04)² + (16.9·0.03)²) = 11.57 °C → p95 − p05 = 2·1.645·11.57 = 38.1
    const sd = Math.sqrt(11.5 ** 2 + (10.7 * 0.03) ** 2 + (29.1 * 0.04) ** 2 + (16.9 * 0.03) ** 2);
    expect(Math.abs((b.ae1.p95 - b.ae1.p05) / (2 * 1.6449 * sd) - 1)).toBeLessThan(0.03);
    // Ms: van Bohemen, 15 °C assumed, plus chemistry (C 0.015 dominates: ∂Ms/∂C = 600·0.96·e^(−0.96·0.6) ≈ 324 °C/wt%)
    const msSd = Math.sqrt(15 ** 2 + (324 * 0.015) ** 2 + (31 * 0.03) ** 2 + (13 * 0.04) ** 2 + (10 * 0.03) ** 2 + (12 * 0.01) ** 2);
    expect(Math.abs((b.ms.p95 - b.ms.p05) / (2 * 1.6449 * msSd) - 1)).toBeLessThan(0.03);
  });

  it('the same seed gives the same bands; another seed other ones; no samples gives the nominal', () => {
    const a = predict(quick(300, 7)).temperatureBandsC;
    expect(predict(quick(300, 7)).temperatureBandsC).toEqual(a);
    expect(predict(quick(300, 8)).temperatureBandsC).not.toEqual(a);
    const none = predict(quick(0, 7));
    for (const q of ['ae1', 'ae3', 'bs', 'ms'] as const) {
      expect(none.temperatureBandsC[q]).toEqual({ p05: none.temperaturesC[q], p50: none.temperaturesC[q], p95: none.temperaturesC[q] });
    }
  });

  it('does not touch the kinetics ensemble: its members are the same before and after the bands are drawn', () => {
    const model = batchModel(setupOf(quick(200, 11)));
    const before = JSON.stringify(Object.values(model.members).map((col) => Array.from(col as Float64Array)));
    temperatureBands(model);
    const after = JSON.stringify(Object.values(model.members).map((col) => Array.from(col as Float64Array)));
    expect(after).toBe(before);
  });

  it('ductile iron: bands on the matrix carbon (Voigt–Loper), like temperaturesC', () => {
    const iron = predict({ ...quick(200, 3), material: 'ductile-iron', chemistryWtPct: { C: 3.6, Si: 2.5, Mn: 0.3, Ni: 0.8, Mo: 0.2 }, austenitize: { tempC: 900, minutes: 90 } });
    expect(Math.abs(iron.temperatureBandsC.ms.p50 - iron.temperaturesC.ms)).toBeLessThan(2);
  });
});
