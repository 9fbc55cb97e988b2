import { describe, expect, it } from 'vitest';
import { AcceptanceCriteria, ChemistryLimits, ProcessWindow, ProductSpecVersionInput } from './spec.js';

/** An ADI recipe inside the ranges of practice.md §2.2 (austenitize 850–950 °C for 15–120 min, salt
 *  230–400 °C for 30–240 min [S33]); the transfer limit is within the 15–30 s batch range of §2.4 [M]. */
const adiProcessWindow = {
  austenitize: { minTempC: 890, maxTempC: 910, minMinutes: 60, maxMinutes: 120 },
  maxTransferS: 20,
  bath: { minTempC: 360, maxTempC: 380, maxExcursionS: 120, minHoldMin: 60, maxHoldMin: 120 },
  maxChannelGapS: 30,
  flatline: { minDurationS: 600, epsilonC: 0.05 },
  plausible: { minTempC: 0, maxTempC: 1200, maxRateCPerS: 50 },
  twinTolerance: { maxDiffC: 8, minDurationS: 60 },
};

const issuePaths = (r: { success: boolean; error?: { issues: { path: PropertyKey[] }[] } }) =>
  (r.error?.issues ?? []).map((i) => i.path.join('.'));

describe('ProcessWindow', () => {
  it('accepts a complete window and leaves austenitize.maxMinutes optional', () => {
    expect(ProcessWindow.safeParse(adiProcessWindow).success).toBe(true);
    const { maxMinutes: _, ...austenitize } = adiProcessWindow.austenitize;
    expect(ProcessWindow.safeParse({ ...adiProcessWindow, austenitize }).success).toBe(true);
  });

  it('names the field of an inverted band, a missing field, a misspelt field and a wrong type', () => {
    const inverted = ProcessWindow.safeParse({ ...adiProcessWindow, bath: { ...adiProcessWindow.bath, minTempC: 390 } });
    expect(issuePaths(inverted)).toEqual(['bath.maxTempC']);

    const { maxTransferS: _, ...missing } = adiProcessWindow;
    expect(issuePaths(ProcessWindow.safeParse(missing))).toEqual(['maxTransferS']);

    const misspelt = ProcessWindow.safeParse({ ...adiProcessWindow, bath: { ...adiProcessWindow.bath, maxExcursionSec: 60 } });
    expect(misspelt.success).toBe(false);
    expect(issuePaths(misspelt)).toEqual(['bath']);

    expect(issuePaths(ProcessWindow.safeParse({ ...adiProcessWindow, maxChannelGapS: '30' }))).toEqual(['maxChannelGapS']);
    expect(issuePaths(ProcessWindow.safeParse({ ...adiProcessWindow, maxTransferS: 0 }))).toEqual(['maxTransferS']);
    const holdInverted = ProcessWindow.safeParse({ ...adiProcessWindow, bath: { ...adiProcessWindow.bath, minHoldMin: 200 } });
    expect(issuePaths(holdInverted)).toEqual(['bath.maxHoldMin']);
  });
});

describe('ChemistryLimits', () => {
  it('accepts per-element limits in wt% with either bound', () => {
    const r = ChemistryLimits.safeParse({ C: { minWtPct: 3.4, maxWtPct: 3.8 }, Si: { minWtPct: 2.3 }, S: { maxWtPct: 0.02 } });
    expect(r.success).toBe(true);
  });
  it('rejects an unknown element, an empty limit and min above max', () => {
    expect(ChemistryLimits.safeParse({ Xx: { maxWtPct: 1 } }).success).toBe(false);
    expect(issuePaths(ChemistryLimits.safeParse({ Mn: {} }))).toEqual(['Mn']);
    expect(issuePaths(ChemistryLimits.safeParse({ Mn: { minWtPct: 0.5, maxWtPct: 0.3 } }))).toEqual(['Mn.maxWtPct']);
  });
});

describe('AcceptanceCriteria', () => {
  it('accepts an empty object and the metallurgical fields as optional', () => {
    expect(AcceptanceCriteria.safeParse({}).success).toBe(true);
    const r = AcceptanceCriteria.safeParse({
      hardness: { scale: 'HBW', min: 269, max: 321 },
      tensile: { minTensileMPa: 900, minYieldMPa: 600, minElongationPct: 9 },
      minBainiteFraction: 0.8,
      maxFreshMartensiteFraction: 0.02,
      maxBlockyAusteniteFraction: 0.05,
      minFilmToBlockRatio: 0.9,
      minMsMarginC: 20,
      minBsMarginC: 10,
      minSiPlusAlWtPct: 1.5,
    });
    expect(r.success).toBe(true);
  });
  it('rejects a fraction above 1 and an inverted hardness band', () => {
    expect(issuePaths(AcceptanceCriteria.safeParse({ minBainiteFraction: 80 }))).toEqual(['minBainiteFraction']);
    expect(issuePaths(AcceptanceCriteria.safeParse({ hardness: { scale: 'HRC', min: 55, max: 50 } }))).toEqual(['hardness.max']);
  });
});

describe('ProductSpecVersionInput', () => {
  it('needs all three parts', () => {
    expect(ProductSpecVersionInput.safeParse({ chemistryLimits: {}, processWindow: adiProcessWindow, acceptanceCriteria: {} }).success).toBe(true);
    expect(issuePaths(ProductSpecVersionInput.safeParse({ chemistryLimits: {}, acceptanceCriteria: {} }))).toEqual(['processWindow']);
  });
});
