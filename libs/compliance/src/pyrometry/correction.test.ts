import { describe, expect, it } from 'vitest';
import { applyCalibrationCorrection, applyCorrectionsInSeries } from './correction.js';
import { PyrometryInputError } from './errors.js';

// Rules under test, practice.md §1.1 sensors: between calibration points interpolate linearly or
// take the nearest point ([S15]); never extrapolate beyond the calibrated points ([S19]).
const certificate = [
  { atC: 900, correctionC: 1.2 },
  { atC: 300, correctionC: -0.4 },
  { atC: 600, correctionC: 0.2 },
]; // deliberately unsorted: certificates are not always typed in order

describe('applyCalibrationCorrection', () => {
  it('applies the certificate value exactly at a calibration point, including the range ends', () => {
    expect(applyCalibrationCorrection(600, certificate)).toMatchObject({ correctedC: 600.2, correctionC: 0.2, applied: true, flag: null });
    expect(applyCalibrationCorrection(300, certificate).correctionC).toBe(-0.4);
    expect(applyCalibrationCorrection(900, certificate).correctionC).toBe(1.2);
  });

  it('interpolates linearly between neighbouring points', () => {
    // 450 °C is halfway between 300 (−0.4) and 600 (+0.2): −0.1.
    const mid = applyCalibrationCorrection(450, certificate);
    expect(mid.correctionC).toBeCloseTo(-0.1, 12);
    expect(mid.correctedC).toBeCloseTo(449.9, 12);
    // 870 °C is 0.9 of the way from 600 (+0.2) to 900 (+1.2): +1.1.
    expect(applyCalibrationCorrection(870, certificate).correctionC).toBeCloseTo(1.1, 12);
  });

  it('takes the nearest point when the lab records that rule, lower point on an exact tie', () => {
    expect(applyCalibrationCorrection(700, certificate, { method: 'nearest' }).correctionC).toBe(0.2);
    expect(applyCalibrationCorrection(800, certificate, { method: 'nearest' }).correctionC).toBe(1.2);
    expect(applyCalibrationCorrection(750, certificate, { method: 'nearest' }).correctionC).toBe(0.2);
  });

  it('never extrapolates: outside the calibrated range the value comes back unchanged with a flag', () => {
    const above = applyCalibrationCorrection(900.1, certificate);
    expect(above).toMatchObject({ correctedC: 900.1, correctionC: 0, applied: false, flag: 'outside-calibrated-range', calibratedRangeC: { lowC: 300, highC: 900 } });
    const below = applyCalibrationCorrection(250, certificate);
    expect(below).toMatchObject({ correctedC: 250, applied: false, flag: 'outside-calibrated-range' });
  });

  it('looks the correction up at the setpoint when given, and corrects the reading with it', () => {
    // Corrections are chosen by setpoint ([S15]): reading 596.5 during a 600 °C survey gets +0.2.
    const r = applyCalibrationCorrection(596.5, certificate, { lookupTempC: 600 });
    expect(r.correctionC).toBe(0.2);
    expect(r.correctedC).toBeCloseTo(596.7, 12);
  });

  it('a single-point certificate corrects only at that temperature', () => {
    const single = [{ atC: 870, correctionC: 0.5 }];
    expect(applyCalibrationCorrection(870, single).correctedC).toBe(870.5);
    expect(applyCalibrationCorrection(871, single).flag).toBe('outside-calibrated-range');
  });

  it('reports a missing certificate rather than assuming zero correction silently', () => {
    expect(applyCalibrationCorrection(500, [])).toMatchObject({ correctedC: 500, applied: false, flag: 'no-calibration-points', calibratedRangeC: null });
  });

  it('refuses ambiguous or broken certificates with the field path', () => {
    expect(() => applyCalibrationCorrection(500, [{ atC: 300, correctionC: 0 }, { atC: 300, correctionC: 1 }])).toThrow(
      /calibrationPoints\[1\]\.atC: duplicates the temperature of calibrationPoints\[0\]/,
    );
    try {
      applyCalibrationCorrection(500, [{ atC: Number.NaN, correctionC: 0 }], { path: 'sensors[2].calibration' });
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(PyrometryInputError);
      expect((e as PyrometryInputError).path).toBe('sensors[2].calibration[0].atC');
    }
  });

  it('adds sensor and instrument corrections in series at the same lookup temperature', () => {
    const r = applyCorrectionsInSeries(
      598,
      [
        { points: certificate, path: 'sensor' },
        { points: [{ atC: 0, correctionC: -0.1 }, { atC: 1000, correctionC: -0.1 }], path: 'instrument' },
      ],
      { lookupTempC: 600 },
    );
    expect(r.correctedC).toBeCloseTo(598.1, 12);
    expect(r.steps.map((s) => s.applied)).toEqual([true, true]);
  });
});
