import { describe, expect, it } from 'vitest';
import { batchModel, clearModelCache, DEFAULT_THERMOCOUPLE_SD_C, MODEL_ERRORS } from './ensemble.js';
import { liBainiteFactor, liBainiteStartC } from './kinetics/li1998.js';
import type { BatchSetup } from './setup.js';

const setup: BatchSetup = {
  material: 'steel',
  chemistryWtPct: { C: 0.6, Si: 1.6, Mn: 0.8, Cr: 0.3 },
  grainSizeAstm: 8,
  section: { shape: 'plate', thicknessMm: 5 },
  austenitize: { tempC: 880, minutes: 20 },
  transferS: 5,
  agitation: 'moderate',
  ambientC: 20,
  uncertainty: { samples: 2000, seed: 21 },
};

const mean = (a: Float64Array) => a.slice(1).reduce((s, x) => s + x, 0) / (a.length - 1);
const sd = (a: Float64Array) => {
  const m = mean(a);
  return Math.sqrt(a.slice(1).reduce((s, x) => s + (x - m) ** 2, 0) / (a.length - 2));
};

describe('uncertainty ensemble', () => {
  const model = batchModel(setup);
  const m = model.members;

  it('member 0 is the nominal model', () => {
    expect(m.thermocoupleOffsetC[0]).toBe(0);
    expect(m.carbonWtPct[0]).toBe(0.6);
    expect(m.descriptionMix[0]).toBe(0);
    expect(m.storedEnergyScale[0]).toBe(1);
    expect(m.bainiteStartC[0]).toBeCloseTo(liBainiteStartC(setup.chemistryWtPct), 9);
    expect(m.bainitePrefactor[0]).toBeCloseTo(Math.pow(2, 0.29 * 8) / liBainiteFactor(setup.chemistryWtPct), 9);
    expect(model.t0Elements.sort()).toEqual(['Cr', 'Mn', 'Si']);
  });

  it('members follow the stated distributions (Latin hypercube, 2000 samples)', () => {
    expect(mean(m.thermocoupleOffsetC)).toBeCloseTo(0, 2);
    expect(sd(m.thermocoupleOffsetC)).toBeCloseTo(DEFAULT_THERMOCOUPLE_SD_C, 1);
    expect(sd(m.carbonWtPct)).toBeCloseTo(0.015, 3);
    expect(mean(m.descriptionMix)).toBeCloseTo(0.5, 2);
    expect(sd(m.storedEnergyScale) * 400).toBeCloseTo(MODEL_ERRORS.storedEnergySdJPerMol, -1);
    expect(sd(m.bainiteStartC)).toBeGreaterThan(0.9 * MODEL_ERRORS.liBainiteStartSdC);
    expect(Math.min(...m.carbonWtPct)).toBeGreaterThan(0.5);
  });

  it('is a pure function of the setup: rebuilding gives the same numbers', () => {
    const before = Array.from(m.bainitePrefactor);
    clearModelCache();
    const again = batchModel(setup);
    expect(again).not.toBe(model);
    expect(Array.from(again.members.bainitePrefactor)).toEqual(before);
    const other = batchModel({ ...setup, uncertainty: { samples: 2000, seed: 22 } });
    expect(Array.from(other.members.bainitePrefactor)).not.toEqual(before);
  });

  it('honours plant overrides of the thermocouple and chemistry spreads', () => {
    const tight = batchModel({ ...setup, uncertainty: { samples: 500, seed: 1, thermocoupleSdC: 0.5, chemistrySdWtPct: { C: 0 } } });
    expect(sd(tight.members.thermocoupleOffsetC)).toBeCloseTo(0.5, 1);
    expect(new Set(tight.members.carbonWtPct).size).toBe(1);
  });
});
