import { describe, expect, it } from 'vitest';
import { fToC } from './limits.js';
import { applyReferenceOverlay } from './overlay.js';
import { AMS2750G, AMS2750H, CQI9_4 } from './reference/index.js';
import { judgeUniformitySurvey, type SurveyReading, type UniformitySurveyInput } from './uniformity.js';

const t0 = Date.parse('2025-03-04T08:00:00Z');
const at = (minutes: number) => new Date(t0 + minutes * 60_000);
const flatCalibration = (correctionC: number, lowC = 800, highC = 900) => [
  { atC: lowC, correctionC },
  { atC: highC, correctionC },
];

/** Readings per location at 0, 2 and 4 minutes. */
function readingsOf(byLocation: Record<string, number[]>): SurveyReading[] {
  return Object.entries(byLocation).flatMap(([locationId, values]) => values.map((readingC, k) => ({ locationId, at: at(2 * k), readingC })));
}

function furnaceSurvey(byLocation: Record<string, number[]>, extra: Partial<UniformitySurveyInput> = {}): UniformitySurveyInput {
  return {
    equipmentId: 'F-1',
    furnaceClass: 2,
    instrumentationType: 'B',
    setpointC: 870,
    locations: ['L1', 'L2', 'L3', 'L4', 'L5'].map((locationId) => ({
      locationId,
      testSensorId: `T-${locationId}`,
      calibration: flatCalibration(locationId === 'L3' ? 0.5 : 0),
    })),
    readings: readingsOf(byLocation),
    ...extra,
  };
}

const passingFurnace = {
  L1: [868.0, 869.5, 870.4],
  L2: [871.2, 872.0, 871.5],
  L3: [875.2, 874.9, 875.0], // +0.5 °C correction: 875.7 °C corrected
  L4: [865.1, 864.5, 866.0],
  L5: [870.0, 870.0, 870.0],
};

// Class 2 tolerance ±6.0 °C (±10 °F): practice.md §1.1 furnace classes [S2, S70], per F/G.
describe('judgeUniformitySurvey, AMS 2750G class 2 type B furnace at 870 °C (±6.0 °C)', () => {
  it('passes when every corrected reading is within 864–876 °C, reporting worst location and spread', () => {
    const r = judgeUniformitySurvey(furnaceSurvey(passingFurnace), AMS2750G);
    expect(r.verdict).toBe('pass');
    expect(r.tolerance).toMatchObject({ key: 'AMS2750G uniformityTolerance class 2', bandC: 6, confirmed: true });
    expect(r.tolerance?.note).toMatch(/\[S2, S70\]/);
    expect(r.bandC).toEqual({ lowC: 864, highC: 876 });
    expect(r.worst).toMatchObject({ locationId: 'L3', readingC: 875.2 });
    expect(r.worst?.deviationC).toBeCloseTo(5.7, 9);
    expect(r.maxC).toBeCloseTo(875.7, 9);
    expect(r.minC).toBe(864.5);
    expect(r.spreadC).toBeCloseTo(11.2, 9);
    expect(r.failedReadings).toEqual([]);
    expect(r.perLocation.find((l) => l.locationId === 'L4')).toMatchObject({ minC: 864.5, worstDeviationC: -5.5, failedCount: 0 });
  });

  it('fails a reading pushed out of tolerance by its correction, and names each failed reading', () => {
    // L3 reads 875.8 °C raw (inside), but its sensor reads 0.5 °C low: 876.3 °C is outside.
    const r = judgeUniformitySurvey(furnaceSurvey({ ...passingFurnace, L3: [875.2, 875.8, 875.0], L4: [865.1, 863.9, 866.0] }), AMS2750G);
    expect(r.verdict).toBe('fail');
    expect(r.failedReadings.map((f) => [f.locationId, f.at.toISOString()])).toEqual([
      ['L3', '2025-03-04T08:02:00.000Z'],
      ['L4', '2025-03-04T08:02:00.000Z'],
    ]);
    expect(r.failedReadings[0].correctedC).toBeCloseTo(876.3, 9);
    expect(r.worst?.locationId).toBe('L3');
    expect(r.perLocation.map((l) => l.failedCount)).toEqual([0, 0, 1, 1, 0]);
  });

  it('instrumentation type does not change the class tolerance', () => {
    const b = judgeUniformitySurvey(furnaceSurvey(passingFurnace), AMS2750G);
    const d = judgeUniformitySurvey(furnaceSurvey(passingFurnace, { instrumentationType: 'D' }), AMS2750G);
    expect(d.tolerance?.bandC).toBe(b.tolerance?.bandC);
    expect(d.verdict).toBe('pass');
  });

  it('with the ±10 °F figure governing (±5.56 °C) a 5.7 °C deviation fails', () => {
    const r = judgeUniformitySurvey(furnaceSurvey(passingFurnace, { limitUnit: 'F' }), AMS2750G);
    expect(r.tolerance?.bandC).toBeCloseTo(50 / 9, 12);
    expect(r.verdict).toBe('fail');
    // L3 corrected: 875.7, 875.4, 875.5 °C; only 875.7 is above 870 + 5.556.
    expect(r.failedReadings.map((f) => f.correctedC)).toEqual([875.7]);
  });

  it("with a customer's ±5.0 °C for class 2 (some primes accept it, [S2]) the same survey fails", () => {
    const overlaid = applyReferenceOverlay(AMS2750G, {
      source: 'Customer spec HT-100 rev C §4.2',
      entries: [{ item: 'uniformityTolerance', furnaceClass: 2, value: { plusMinusC: 5.0 } }],
    });
    if (!overlaid.ok) throw new Error('overlay refused');
    const r = judgeUniformitySurvey(furnaceSurvey(passingFurnace), overlaid.reference);
    expect(r.verdict).toBe('fail');
    expect(r.tolerance?.note).toMatch(/Customer spec HT-100/);
  });

  it('reports whether hot and cold sensors may stay: within half the tolerance on each side', () => {
    const r = judgeUniformitySurvey(furnaceSurvey(passingFurnace), AMS2750G);
    expect(r.hotColdRelocation).toMatchObject({ fraction: 0.5, highSideWithin: false, lowSideWithin: false, confirmed: false });
    const tight = judgeUniformitySurvey(
      furnaceSurvey({ L1: [868, 869, 870], L2: [871, 872, 873], L3: [872.5, 872, 872], L4: [867, 867.5, 868], L5: [870, 870, 870] }),
      AMS2750G,
    );
    expect(tight.hotColdRelocation).toMatchObject({ highSideWithin: true, lowSideWithin: true });
  });
});

describe('hot/cold relocation, the worked example of practice.md §1.1 ([S9]; rule in AMS 2750H §3.5.15 [S4])', () => {
  // "A class 2 furnace (±10 °F) at 870 °F needs all survey readings between 865 and 875 °F."
  const survey = (highF: number): UniformitySurveyInput => ({
    equipmentId: 'F-2',
    furnaceClass: 2,
    instrumentationType: 'C',
    setpointC: fToC(870),
    limitUnit: 'F',
    locations: [
      { locationId: 'hot', testSensorId: 'T-1', calibration: flatCalibration(0, 400, 500) },
      { locationId: 'cold', testSensorId: 'T-2', calibration: flatCalibration(0, 400, 500) },
    ],
    readings: [
      { locationId: 'hot', at: at(0), readingC: fToC(highF) },
      { locationId: 'cold', at: at(0), readingC: fToC(865) },
    ],
  });

  it('865–875 °F keeps the sensors where they are; 875.5 °F does not on the hot side', () => {
    expect(judgeUniformitySurvey(survey(875), AMS2750H).hotColdRelocation).toMatchObject({ highSideWithin: true, lowSideWithin: true, confirmed: true });
    const over = judgeUniformitySurvey(survey(875.5), AMS2750H);
    expect(over.verdict).toBe('pass'); // still inside ±10 °F
    expect(over.hotColdRelocation).toMatchObject({ highSideWithin: false, lowSideWithin: true });
  });
});

// Class 5 tolerance ±14 °C (±25 °F): practice.md §1.1 furnace classes [S2, S70], per F/G.
describe('judgeUniformitySurvey, AMS 2750G class 5 type B austempering salt bath at 300 °C (±14 °C)', () => {
  // The bottom location mirrors the top around the setpoint unless given.
  const bath = (values: number[], bottomValues?: number[]): UniformitySurveyInput => ({
    equipmentId: 'B-1',
    furnaceClass: 5,
    instrumentationType: 'B',
    setpointC: 300,
    locations: [
      { locationId: 'top', testSensorId: 'T-a', calibration: flatCalibration(-0.4, 250, 350) },
      { locationId: 'bottom', testSensorId: 'T-b', calibration: flatCalibration(0.2, 250, 350) },
    ],
    readings: values.flatMap((v, k) => [
      { locationId: 'top', at: at(2 * k), readingC: v },
      { locationId: 'bottom', at: at(2 * k), readingC: bottomValues?.[k] ?? 300 - (v - 300) },
    ]),
  });

  it('passes readings within 286–314 °C', () => {
    const r = judgeUniformitySurvey(bath([305, 311, 313.9]), AMS2750G);
    expect(r.verdict).toBe('pass');
    expect(r.tolerance).toMatchObject({ bandC: 14, confirmed: true });
    // top 313.9 − 0.4 = 313.5; bottom 286.1 + 0.2 = 286.3 → spread 27.2
    expect(r.spreadC).toBeCloseTo(27.2, 9);
  });

  it('fails readings beyond ±14 °C after correction, on both sides', () => {
    // top 314.6 − 0.4 = 314.2 (+14.2); bottom 285.4 + 0.2 = 285.6 (−14.4, the worst).
    const r = judgeUniformitySurvey(bath([305, 314.6]), AMS2750G);
    expect(r.verdict).toBe('fail');
    expect(r.failedReadings.map((f) => [f.locationId, f.readingC])).toEqual([
      ['top', 314.6],
      ['bottom', 285.4],
    ]);
    expect(r.failedReadings[0].deviationC).toBeCloseTo(14.2, 9);
    expect(r.worst?.locationId).toBe('bottom');
    expect(r.worst?.deviationC).toBeCloseTo(-14.4, 9);
  });

  it('a raw 314.3 °C passes at the top because its sensor reads 0.4 °C high (corrected 313.9 °C)', () => {
    const r = judgeUniformitySurvey(bath([314.3], [296]), AMS2750G);
    expect(r.verdict).toBe('pass');
  });
});

describe('judgeUniformitySurvey refuses what it cannot judge', () => {
  it('a test sensor not calibrated at the setpoint makes the survey invalid (no extrapolation, [S19])', () => {
    const input = furnaceSurvey(passingFurnace);
    const r = judgeUniformitySurvey({ ...input, locations: input.locations.map((l) => (l.locationId === 'L2' ? { ...l, calibration: flatCalibration(0, 600, 800) } : l)) }, AMS2750G);
    expect(r.verdict).toBe('invalid');
    expect(r.problems.join(' ')).toMatch(/location L2: test sensor T-L2 is calibrated 600–800 °C; 870 °C is outside/);
  });

  it('a location without readings makes the survey invalid', () => {
    const { L5: _dropped, ...rest } = passingFurnace;
    expect(judgeUniformitySurvey(furnaceSurvey(rest), AMS2750G).problems).toContain('location L5 has no readings');
  });

  it('CQI-9 gives no class tolerance in practice.md, so a survey cannot be judged until the plant enters one', () => {
    const r = judgeUniformitySurvey(furnaceSurvey(passingFurnace), CQI9_4);
    expect(r.verdict).toBe('invalid');
    expect(r.problems.join(' ')).toMatch(/no uniformity tolerance in CQI-9-4 uniformityTolerance/);
  });

  it('unknown locations and repeated readings are input errors with the field path', () => {
    const input = furnaceSurvey(passingFurnace);
    expect(() => judgeUniformitySurvey({ ...input, readings: [...input.readings, { locationId: 'L9', at: at(0), readingC: 870 }] }, AMS2750G)).toThrow(
      /readings\[15\]\.locationId: unknown location "L9"/,
    );
    expect(() => judgeUniformitySurvey({ ...input, readings: [...input.readings, { locationId: 'L1', at: at(0), readingC: 870 }] }, AMS2750G)).toThrow(
      /readings\[15\]: second reading for location L1/,
    );
  });

  it('warns about gaps longer than the 2-minute logging interval ([S69], unconfirmed for current revisions)', () => {
    const input = furnaceSurvey(passingFurnace);
    // Same values logged every 3 minutes instead of every 2.
    const everyThreeMinutes = input.readings.map((x) => ({ ...x, at: new Date(t0 + ((x.at.getTime() - t0) * 3) / 2) }));
    const r = judgeUniformitySurvey({ ...input, readings: everyThreeMinutes }, AMS2750G);
    expect(r.verdict).toBe('pass');
    expect(r.warnings.some((w) => /180 s between readings/.test(w))).toBe(true);
  });
});
