import { describe, expect, it } from 'vitest';
import { judgeAccuracyTest, judgeInstrumentCalibration, judgeSensorCalibration, type AccuracyTestInput } from './accuracy.js';
import { PyrometryInputError } from './errors.js';
import { resolveLimit } from './limits.js';
import { AMS2750E, AMS2750G, CQI9_3 } from './reference/index.js';

// SAT difference = system under test reading − corrected test reading, production offsets
// included (practice.md §1.1 SAT [S13]); pass when |difference| ≤ the allowed difference.

const hardeningFurnaceSat = (instrumentReadingC: number, testSensorReadingC: number, extra: Partial<AccuracyTestInput> = {}): AccuracyTestInput => ({
  equipmentId: 'F-1',
  sensorId: 'F-1-control',
  furnaceClass: 2,
  instrumentationType: 'B',
  testedAt: new Date('2025-03-04T08:00:00Z'),
  setpointC: 870,
  instrumentReadingC,
  testSensorId: 'T-17',
  testSensorReadingC,
  // Correction at 870 °C interpolates to 0.4 + 0.7 × (0.8 − 0.4) = +0.68 °C.
  testSensorCalibration: [
    { atC: 800, correctionC: 0.4 },
    { atC: 900, correctionC: 0.8 },
  ],
  ...extra,
});

describe('judgeAccuracyTest, AMS 2750E class 2 type B furnace (limit ±1.7 °C / ±3 °F)', () => {
  // Limit: ±3.0 °F for class 2, confirmed for AMS 2750E in practice.md §1.1 SAT [S9]; ±1.7 °C is
  // the °C figure practice.md gives beside it.
  it('passes a difference inside the limit, with the numbers and the limit named', () => {
    const r = judgeAccuracyTest(hardeningFurnaceSat(871.2, 868.9), AMS2750E);
    expect(r.verdict).toBe('pass');
    expect(r.testCorrectedC).toBeCloseTo(869.58, 9);
    expect(r.differenceC).toBeCloseTo(1.62, 9);
    expect(r.limit).toMatchObject({ key: 'AMS2750E satDifferenceLimit class 2', bandC: 1.7, unit: 'C', confirmed: true });
    expect(r.limit?.note).toMatch(/\[S9\]/);
    expect(r.corrections.testSensor).toMatchObject({ applied: true });
    expect(r.corrections.testSensor.correctionC).toBeCloseTo(0.68, 12);
  });

  it('fails a difference beyond the limit, on either side', () => {
    const high = judgeAccuracyTest(hardeningFurnaceSat(871.4, 868.9), AMS2750E);
    expect(high).toMatchObject({ verdict: 'fail', passed: false });
    expect(high.differenceC).toBeCloseTo(1.82, 9);
    const low = judgeAccuracyTest(hardeningFurnaceSat(867.8, 868.9), AMS2750E);
    expect(low.verdict).toBe('fail');
    expect(low.differenceC).toBeCloseTo(-1.78, 9);
  });

  it('passes a difference exactly on the limit despite binary rounding (871.2 − 869.5)', () => {
    const r = judgeAccuracyTest(hardeningFurnaceSat(871.2, 868.82), AMS2750E);
    expect(871.2 - (868.82 + 0.68)).not.toBe(1.7); // the raw float difference is off by a hair
    expect(r.verdict).toBe('pass');
  });

  it('judges against ±3 °F when the °F figure governs: 1.7 °C passes in °C but fails in °F', () => {
    // ±3 °F = ±1.667 °C, tighter than ±1.7 °C; the plant's procedure says which unit governs.
    const inC = judgeAccuracyTest(hardeningFurnaceSat(871.2, 868.82), AMS2750E);
    const inF = judgeAccuracyTest(hardeningFurnaceSat(871.2, 868.82, { limitUnit: 'F' }), AMS2750E);
    expect(inC.verdict).toBe('pass');
    expect(inF.verdict).toBe('fail');
    expect(inF.limit?.bandC).toBeCloseTo(5 / 3, 12);
    expect(judgeAccuracyTest(hardeningFurnaceSat(871.2, 868.9, { limitUnit: 'F' }), AMS2750E).verdict).toBe('pass');
  });

  it('includes the production correction of the system under test ([S13])', () => {
    // Without it the difference is 1.82 °C (fail); the service subtracts 0.3 °C from this channel
    // in production, so the rules see 871.1 and the SAT must judge that: 1.52 °C, pass.
    const r = judgeAccuracyTest(
      hardeningFurnaceSat(871.4, 868.9, { systemCalibration: [{ atC: 800, correctionC: -0.3 }, { atC: 900, correctionC: -0.3 }] }),
      AMS2750E,
    );
    expect(r.verdict).toBe('pass');
    expect(r.systemCorrectedC).toBeCloseTo(871.1, 9);
    expect(r.differenceC).toBeCloseTo(1.52, 9);
  });

  it('flags the same class under AMS 2750G as an unconfirmed limit', () => {
    const r = judgeAccuracyTest(hardeningFurnaceSat(871.2, 868.9), AMS2750G);
    expect(r.verdict).toBe('pass');
    expect(r.limit?.confirmed).toBe(false);
    expect(r.notes.join(' ')).toMatch(/limit not confirmed/);
  });
});

describe('judgeAccuracyTest, AMS 2750E class 5 type D salt bath (limit ±2.8 °C, from memory)', () => {
  const bathSat = (instrumentReadingC: number): AccuracyTestInput => ({
    equipmentId: 'B-1',
    sensorId: 'B-1-control',
    furnaceClass: 5,
    instrumentationType: 'D',
    testedAt: new Date('2025-03-04T09:00:00Z'),
    setpointC: 300,
    instrumentReadingC,
    testSensorId: 'T-3',
    testSensorReadingC: 300.4,
    testSensorCalibration: [
      { atC: 250, correctionC: -0.3 },
      { atC: 350, correctionC: -0.1 },
    ], // −0.2 °C at 300 °C → test corrected 300.2 °C
  });

  // ±2.8 °C (5 °F) for class 5: practice.md §1.1 SAT table, [M] — from memory.
  it('passes 2.6 °C and fails 3.0 °C', () => {
    const pass = judgeAccuracyTest(bathSat(302.8), AMS2750E);
    expect(pass.verdict).toBe('pass');
    expect(pass.differenceC).toBeCloseTo(2.6, 9);
    expect(pass.limit).toMatchObject({ bandC: 2.8, confirmed: false });
    expect(pass.limit?.note).toMatch(/from memory/);
    const fail = judgeAccuracyTest(bathSat(303.2), AMS2750E);
    expect(fail.verdict).toBe('fail');
    expect(fail.differenceC).toBeCloseTo(3.0, 9);
  });
});

describe('judgeAccuracyTest, CQI-9 3rd edition by SAT method', () => {
  const cqiSat = (satMethod: 'probe' | 'comparative', instrumentReadingC: number): AccuracyTestInput => ({
    equipmentId: 'B-2',
    sensorId: 'B-2-control',
    furnaceClass: 5,
    instrumentationType: 'C',
    satMethod,
    testedAt: new Date('2025-03-04T10:00:00Z'),
    setpointC: 360,
    instrumentReadingC,
    testSensorId: 'T-9',
    testSensorReadingC: 360,
    testSensorCalibration: [
      { atC: 300, correctionC: 0 },
      { atC: 400, correctionC: 0 },
    ],
    tipDistanceMm: 40,
  });

  // Probe method about ±5 °C, comparative ±1 °C: practice.md §1.2 SAT, 3rd edition as quoted in [S18].
  it('probe method: 4.5 °C passes, 5.5 °C fails', () => {
    expect(judgeAccuracyTest(cqiSat('probe', 364.5), CQI9_3)).toMatchObject({ verdict: 'pass', limit: { bandC: 5, confirmed: true } });
    expect(judgeAccuracyTest(cqiSat('probe', 365.5), CQI9_3).verdict).toBe('fail');
  });

  it('comparative method: 0.9 °C passes, 1.2 °C fails', () => {
    expect(judgeAccuracyTest(cqiSat('comparative', 360.9), CQI9_3).verdict).toBe('pass');
    expect(judgeAccuracyTest(cqiSat('comparative', 361.2), CQI9_3)).toMatchObject({ verdict: 'fail', limit: { key: 'CQI-9-3 satDifferenceLimit comparative method' } });
  });

  it('probe tips farther apart than 50 mm make the test invalid under CQI-9 ([S14])', () => {
    const r = judgeAccuracyTest({ ...cqiSat('probe', 361), tipDistanceMm: 60 }, CQI9_3);
    expect(r.verdict).toBe('invalid');
    expect(r.problems.join(' ')).toMatch(/60 mm apart; CQI-9-3 allows at most 50 mm/);
  });
});

describe('judgeAccuracyTest refuses to judge what it cannot', () => {
  it('a test sensor not calibrated at the setpoint makes the test invalid (no extrapolation, [S19])', () => {
    const r = judgeAccuracyTest(hardeningFurnaceSat(951, 950, { setpointC: 950 }), AMS2750E);
    expect(r).toMatchObject({ verdict: 'invalid', passed: false });
    expect(r.problems.join(' ')).toMatch(/calibrated 800–900 °C; 950 °C is outside and may not be extrapolated/);
  });

  it('a test sensor with no certificate makes the test invalid', () => {
    expect(judgeAccuracyTest(hardeningFurnaceSat(871, 870, { testSensorCalibration: [] }), AMS2750E).verdict).toBe('invalid');
  });

  it('AMS probe tips 80 mm apart exceed 76 mm ([S13, S14])', () => {
    expect(judgeAccuracyTest(hardeningFurnaceSat(871.2, 868.9, { tipDistanceMm: 80 }), AMS2750G).verdict).toBe('invalid');
    expect(judgeAccuracyTest(hardeningFurnaceSat(871.2, 868.9, { tipDistanceMm: 76 }), AMS2750G).verdict).toBe('pass');
  });

  it('CQI-9 without a SAT method on the equipment has no limit to judge against', () => {
    const r = judgeAccuracyTest(hardeningFurnaceSat(871.2, 868.9, { testSensorCalibration: [{ atC: 800, correctionC: 0 }, { atC: 900, correctionC: 0 }] }), CQI9_3);
    expect(r.verdict).toBe('invalid');
    expect(r.problems.join(' ')).toMatch(/SAT method/);
  });

  it('bad numbers are input errors with the field path, not verdicts', () => {
    expect(() => judgeAccuracyTest(hardeningFurnaceSat(Number.NaN, 868.9), AMS2750E)).toThrow(PyrometryInputError);
    expect(() => judgeAccuracyTest(hardeningFurnaceSat(871, 868.9, { testedAt: new Date('nope') }), AMS2750E)).toThrow(/testedAt/);
    // CQI-9 states its SAT limits in °C only ([S18]); asking for °F is the caller's mistake.
    expect(() => judgeAccuracyTest(hardeningFurnaceSat(871, 868.9, { limitUnit: 'F', satMethod: 'probe' }), CQI9_3)).toThrow(/limitUnit.*°C only/);
  });
});

describe('sensor accuracy limits (whichever is greater)', () => {
  // Test sensors ±1.1 °C (±2 °F) or 0.4 %: AMS 2750E Table 1 as summarised by PRI, practice.md §1.1 [S6].
  it('the percentage governs at high temperature, the absolute value at low', () => {
    const limit = AMS2750E.sensorAccuracy['tus-test'].value!;
    expect(resolveLimit(limit, 'C', 870)).toMatchObject({ governedBy: 'percent-of-reading' });
    expect(resolveLimit(limit, 'C', 870).bandC).toBeCloseTo(3.48, 12);
    expect(resolveLimit(limit, 'C', 200)).toMatchObject({ bandC: 1.1, governedBy: 'absolute' });
    // In °F: 0.4 % of 1598 °F = 6.392 °F = 3.551 °C (percentage of the °F reading: our reading).
    expect(resolveLimit(limit, 'F', 870).bandC).toBeCloseTo(3.5511, 4);
  });

  it('judges each certificate point of a test sensor', () => {
    const r = judgeSensorCalibration('tus-test', [
      { atC: 870, correctionC: -2.0 },
      { atC: 200, correctionC: 1.2 },
    ], AMS2750E);
    expect(r.verdict).toBe('fail');
    expect(r.points.map((p) => p.passed)).toEqual([true, false]);
    expect(r.confirmed).toBe(true);
  });

  it('control sensors get standard limits ±2.2 °C or 0.75 % ([S6]); load sensors have no limit in practice.md', () => {
    expect(judgeSensorCalibration('control', [{ atC: 300, correctionC: 2.2 }], AMS2750E).verdict).toBe('pass');
    expect(judgeSensorCalibration('control', [{ atC: 300, correctionC: 2.3 }], AMS2750E).verdict).toBe('fail');
    expect(judgeSensorCalibration('load', [{ atC: 300, correctionC: 0.1 }], AMS2750E)).toMatchObject({ verdict: 'invalid' });
  });
});

describe('instrument accuracy limits', () => {
  // Field test instruments ±0.6 °C (±1 °F) or 0.1 %: practice.md §1.1 instruments [M], from memory.
  it('judges a field test instrument certificate, flagging the limit as unconfirmed', () => {
    const r = judgeInstrumentCalibration('field-test', [
      { atC: 300, correctionC: 0.5 }, // band 0.6 °C
      { atC: 900, correctionC: -0.85 }, // band max(0.6, 0.9) = 0.9 °C
      { atC: 1000, correctionC: 1.05 }, // band 1.0 °C: fails
    ], AMS2750G);
    expect(r.points.map((p) => [p.bandC, p.passed])).toEqual([
      [0.6, true],
      [0.9, true],
      [1, false],
    ]);
    expect(r).toMatchObject({ verdict: 'fail', confirmed: false, limitKey: 'AMS2750G instrumentAccuracy field-test' });
    expect(r.note).toMatch(/from memory/);
  });
});
