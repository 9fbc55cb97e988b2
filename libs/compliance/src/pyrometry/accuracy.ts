// System accuracy test (SAT) judgement, and the check of a sensor's calibration against its
// accuracy limit. Pass or fail is computed here from readings and reference data, never entered.
//
// SAT difference = reading of the system under test − corrected reading of the test system, with
// the offsets used in production included (practice.md §1.1 SAT [S13]). Our production offsets are
// the calibration corrections the service applies when rules read a channel, so the system side is
// corrected the same way here: the SAT then tests exactly the temperature the rules see.

import { applyCalibrationCorrection, type CorrectionResult } from './correction.js';
import { PyrometryInputError, requireFinite, requireInstant } from './errors.js';
import { resolveLimit, round, withinBand, type LimitUnit } from './limits.js';
import { lookupKeyed } from './reference/index.js';
import type { AccuracyLimit, CalibrationPoint, FurnaceClass, InstrumentationType, InstrumentUse, PyrometryReference, SatMethod, SensorUse, Sourced } from './types.js';

export type Verdict = 'pass' | 'fail' | 'invalid';

/** The limit a result was judged against, with its provenance. */
export interface LimitUsed {
  readonly key: string;
  readonly bandC: number;
  readonly bandInUnit: number;
  readonly unit: LimitUnit;
  readonly text: string;
  readonly confirmed: boolean;
  readonly note: string;
}

export interface AccuracyTestInput {
  readonly equipmentId: string;
  /** The production sensor (and its instrument) under test. */
  readonly sensorId: string;
  readonly furnaceClass: FurnaceClass;
  readonly instrumentationType: InstrumentationType;
  readonly satMethod?: SatMethod;
  readonly testedAt: Date;
  /** Temperature the test is made at; corrections are looked up here ([S15]). */
  readonly setpointC: number;
  /** What the system under test displays, as displayed. */
  readonly instrumentReadingC: number;
  /** Corrections applied to this channel in production; empty or absent when none are used. */
  readonly systemCalibration?: readonly CalibrationPoint[];
  readonly testSensorId: string;
  readonly testSensorReadingC: number;
  /** The test sensor's certificate; required, and it must cover the setpoint (no extrapolation). */
  readonly testSensorCalibration: readonly CalibrationPoint[];
  /** The test instrument's certificate, when its corrections are not already in the reading. */
  readonly testInstrumentCalibration?: readonly CalibrationPoint[];
  readonly tipDistanceMm?: number | null;
  /** Which stated unit of the limit governs (default °C). */
  readonly limitUnit?: LimitUnit;
}

export interface AccuracyTestResult {
  readonly verdict: Verdict;
  readonly passed: boolean;
  readonly equipmentId: string;
  readonly sensorId: string;
  readonly testedAt: Date;
  readonly systemCorrectedC: number;
  readonly testCorrectedC: number;
  /** systemCorrectedC − testCorrectedC. */
  readonly differenceC: number;
  readonly limit: LimitUsed | null;
  readonly corrections: {
    readonly system: CorrectionResult | null;
    readonly testSensor: CorrectionResult;
    readonly testInstrument: CorrectionResult | null;
  };
  /** Why the test could not be judged (verdict 'invalid'). */
  readonly problems: readonly string[];
  /** Facts worth showing next to the verdict (unconfirmed limit, production correction not applied, ...). */
  readonly notes: readonly string[];
}

export function judgeAccuracyTest(input: AccuracyTestInput, reference: PyrometryReference): AccuracyTestResult {
  requireInstant(input.testedAt, 'testedAt');
  const setpointC = requireFinite(input.setpointC, 'setpointC');
  requireFinite(input.instrumentReadingC, 'instrumentReadingC');
  requireFinite(input.testSensorReadingC, 'testSensorReadingC');
  if (input.tipDistanceMm !== undefined && input.tipDistanceMm !== null) {
    requireFinite(input.tipDistanceMm, 'tipDistanceMm');
    if (input.tipDistanceMm < 0) throw new PyrometryInputError('tipDistanceMm', 'must not be negative');
  }
  const unit = input.limitUnit ?? 'C';
  const problems: string[] = [];
  const notes: string[] = [];

  const system =
    input.systemCalibration && input.systemCalibration.length > 0
      ? applyCalibrationCorrection(input.instrumentReadingC, input.systemCalibration, { lookupTempC: setpointC, path: 'systemCalibration' })
      : null;
  if (system && !system.applied) {
    // Production would not correct outside the calibrated range either, so the SAT tests the
    // uncorrected value, which is what the rules see; worth saying next to the verdict.
    notes.push(`production correction not applied: setpoint ${setpointC} °C is outside the calibrated range of the system under test`);
  }
  const testSensor = applyCalibrationCorrection(input.testSensorReadingC, input.testSensorCalibration, {
    lookupTempC: setpointC,
    path: 'testSensorCalibration',
  });
  if (!testSensor.applied) {
    problems.push(
      testSensor.flag === 'no-calibration-points'
        ? `test sensor ${input.testSensorId} has no calibration points`
        : `test sensor ${input.testSensorId} is calibrated ${testSensor.calibratedRangeC?.lowC}–${testSensor.calibratedRangeC?.highC} °C; ${setpointC} °C is outside and may not be extrapolated`,
    );
  }
  const testInstrument =
    input.testInstrumentCalibration && input.testInstrumentCalibration.length > 0
      ? applyCalibrationCorrection(input.testSensorReadingC, input.testInstrumentCalibration, {
          lookupTempC: setpointC,
          path: 'testInstrumentCalibration',
        })
      : null;
  if (testInstrument && !testInstrument.applied) {
    problems.push(`test instrument calibration does not cover ${setpointC} °C and may not be extrapolated`);
  }

  const systemCorrectedC = system?.correctedC ?? input.instrumentReadingC;
  const testCorrectedC = input.testSensorReadingC + testSensor.correctionC + (testInstrument?.correctionC ?? 0);
  const differenceC = systemCorrectedC - testCorrectedC;

  const maxTip = reference.satProbeTipDistanceMaxMm;
  if (input.tipDistanceMm !== undefined && input.tipDistanceMm !== null && maxTip.value !== null && input.tipDistanceMm > maxTip.value) {
    problems.push(`probe tips ${input.tipDistanceMm} mm apart; ${reference.id} allows at most ${maxTip.value} mm (${maxTip.note})`);
  }

  const looked = lookupKeyed(reference, 'satDifferenceLimit', reference.satDifferenceLimit, input);
  let limit: LimitUsed | null = null;
  if (looked.sourced.value === null) {
    problems.push(`no SAT limit in ${looked.key}: ${looked.sourced.note}`);
  } else {
    const resolved = resolveLimit(looked.sourced.value, unit, testCorrectedC, 'limitUnit');
    limit = { key: looked.key, ...resolved, confirmed: looked.sourced.confirmed, note: looked.sourced.note };
    if (!looked.sourced.confirmed) notes.push(`limit not confirmed: ${looked.sourced.note}`);
    if (resolved.governedBy === 'percent-of-reading' && unit === 'F') {
      notes.push('percentage of reading taken of the °F reading: our reading of the standard, confirm');
    }
  }

  const verdict: Verdict = problems.length > 0 || limit === null ? 'invalid' : withinBand(differenceC, limit.bandC) ? 'pass' : 'fail';
  return {
    verdict,
    passed: verdict === 'pass',
    equipmentId: input.equipmentId,
    sensorId: input.sensorId,
    testedAt: input.testedAt,
    systemCorrectedC,
    testCorrectedC,
    differenceC: round(differenceC, 9),
    limit,
    corrections: { system, testSensor, testInstrument },
    problems,
    notes,
  };
}

export interface CalibrationCheck {
  readonly verdict: Verdict;
  readonly passed: boolean;
  readonly limitKey: string;
  readonly points: readonly {
    readonly atC: number;
    /** Error at this point: −correction. */
    readonly errorC: number;
    readonly bandC: number;
    readonly passed: boolean;
  }[];
  readonly problems: readonly string[];
  readonly confirmed: boolean;
  readonly note: string;
}

function judgeCalibrationPoints(
  limitKey: string,
  sourced: Sourced<AccuracyLimit | null>,
  calibrationPoints: readonly CalibrationPoint[],
  unit: LimitUnit,
): CalibrationCheck {
  if (sourced.value === null) {
    return { verdict: 'invalid', passed: false, limitKey, points: [], problems: [`no accuracy limit in ${limitKey}: ${sourced.note}`], confirmed: false, note: sourced.note };
  }
  if (calibrationPoints.length === 0) {
    return { verdict: 'invalid', passed: false, limitKey, points: [], problems: ['no calibration points'], confirmed: sourced.confirmed, note: sourced.note };
  }
  const value = sourced.value;
  const points = calibrationPoints.map((p, i) => {
    requireFinite(p.atC, `calibrationPoints[${i}].atC`);
    requireFinite(p.correctionC, `calibrationPoints[${i}].correctionC`);
    const bandC = resolveLimit(value, unit, p.atC, 'unit').bandC;
    return { atC: p.atC, errorC: -p.correctionC, bandC, passed: withinBand(p.correctionC, bandC) };
  });
  const passed = points.every((p) => p.passed);
  return { verdict: passed ? 'pass' : 'fail', passed, limitKey, points, problems: [], confirmed: sourced.confirmed, note: sourced.note };
}

/**
 * Checks each point of a sensor's calibration certificate against the accuracy limit for the use
 * the sensor is put to (e.g. test sensors ±1.1 °C or 0.4 %, [S6] for AMS 2750E). Pass or fail of a
 * calibration record comes from here, not from a typed-in flag.
 */
export function judgeSensorCalibration(
  sensorUse: SensorUse,
  calibrationPoints: readonly CalibrationPoint[],
  reference: PyrometryReference,
  unit: LimitUnit = 'C',
): CalibrationCheck {
  return judgeCalibrationPoints(`${reference.id} sensorAccuracy ${sensorUse}`, reference.sensorAccuracy[sensorUse], calibrationPoints, unit);
}

/**
 * The same for an instrument (controller, recorder, field test instrument): each calibration
 * point's correction against the instrument accuracy limit for its use.
 */
export function judgeInstrumentCalibration(
  instrumentUse: InstrumentUse,
  calibrationPoints: readonly CalibrationPoint[],
  reference: PyrometryReference,
  unit: LimitUnit = 'C',
): CalibrationCheck {
  return judgeCalibrationPoints(`${reference.id} instrumentAccuracy ${instrumentUse}`, reference.instrumentAccuracy[instrumentUse], calibrationPoints, unit);
}
