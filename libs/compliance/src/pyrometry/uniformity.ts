// Temperature uniformity survey (TUS) judgement. Every corrected reading of every location must lie
// within setpoint ± the class tolerance (practice.md §1.1 TUS [S14, S70]: "the result is expressed
// as ± degrees from setpoint"). The caller passes the readings of the survey window it means to
// judge; every reading passed is judged, none is skipped.

import type { LimitUsed, Verdict } from './accuracy.js';
import { applyCalibrationCorrection } from './correction.js';
import { PyrometryInputError, requireFinite, requireInstant } from './errors.js';
import { COMPARISON_EPSILON, resolveLimit, round, withinBand, type LimitUnit } from './limits.js';
import { lookupKeyed } from './reference/index.js';
import type { CalibrationPoint, FurnaceClass, InstrumentationType, PyrometryReference } from './types.js';

export interface SurveyLocation {
  readonly locationId: string;
  readonly testSensorId: string;
  /** The test sensor's certificate; it must cover the setpoint (no extrapolation). */
  readonly calibration: readonly CalibrationPoint[];
}

export interface SurveyReading {
  readonly locationId: string;
  readonly at: Date;
  /** As read on the test instrument, uncorrected. */
  readonly readingC: number;
}

export interface UniformitySurveyInput {
  readonly equipmentId: string;
  readonly furnaceClass: FurnaceClass;
  readonly instrumentationType: InstrumentationType;
  readonly setpointC: number;
  readonly locations: readonly SurveyLocation[];
  readonly readings: readonly SurveyReading[];
  /** The test instrument's certificate, when its corrections are not already in the readings. */
  readonly testInstrumentCalibration?: readonly CalibrationPoint[];
  /** Which stated unit of the class tolerance governs (default °C). */
  readonly limitUnit?: LimitUnit;
}

export interface JudgedReading {
  readonly locationId: string;
  readonly at: Date;
  readonly readingC: number;
  readonly correctedC: number;
  /** correctedC − setpointC. */
  readonly deviationC: number;
}

export interface LocationSummary {
  readonly locationId: string;
  readonly testSensorId: string;
  readonly readingCount: number;
  readonly minC: number;
  readonly maxC: number;
  /** The deviation of largest magnitude at this location (signed). */
  readonly worstDeviationC: number;
  readonly failedCount: number;
  readonly correctionC: number;
}

export interface UniformitySurveyResult {
  readonly verdict: Verdict;
  readonly passed: boolean;
  readonly equipmentId: string;
  readonly setpointC: number;
  readonly tolerance: LimitUsed | null;
  readonly bandC: { readonly lowC: number; readonly highC: number } | null;
  readonly readingCount: number;
  readonly minC: number | null;
  readonly maxC: number | null;
  /** Hottest minus coldest corrected reading over the whole survey. */
  readonly spreadC: number | null;
  /** The single reading furthest from setpoint, and where. */
  readonly worst: JudgedReading | null;
  readonly perLocation: readonly LocationSummary[];
  readonly failedReadings: readonly JudgedReading[];
  /**
   * Whether hot and cold recording sensors may stay where they are: the survey stayed within
   * the stated fraction (half) of the tolerance on that side (practice.md §1.1 [S4, S9]).
   */
  readonly hotColdRelocation: {
    readonly fraction: number;
    readonly highSideWithin: boolean;
    readonly lowSideWithin: boolean;
    readonly confirmed: boolean;
    readonly note: string;
  } | null;
  readonly problems: readonly string[];
  readonly warnings: readonly string[];
}

export function judgeUniformitySurvey(input: UniformitySurveyInput, reference: PyrometryReference): UniformitySurveyResult {
  const setpointC = requireFinite(input.setpointC, 'setpointC');
  const unit = input.limitUnit ?? 'C';
  const problems: string[] = [];
  const warnings: string[] = [];

  // Structural errors are the caller's input mistakes: thrown with a field path (a 4xx).
  if (input.locations.length === 0) throw new PyrometryInputError('locations', 'a survey needs at least one location');
  const locationIndex = new Map<string, number>();
  input.locations.forEach((loc, i) => {
    if (!loc.locationId) throw new PyrometryInputError(`locations[${i}].locationId`, 'must not be empty');
    if (locationIndex.has(loc.locationId)) {
      throw new PyrometryInputError(`locations[${i}].locationId`, `duplicates locations[${locationIndex.get(loc.locationId)}] (${loc.locationId})`);
    }
    locationIndex.set(loc.locationId, i);
  });
  const seen = new Map<string, number>();
  input.readings.forEach((r, i) => {
    if (!locationIndex.has(r.locationId)) throw new PyrometryInputError(`readings[${i}].locationId`, `unknown location ${JSON.stringify(r.locationId)}`);
    requireInstant(r.at, `readings[${i}].at`);
    requireFinite(r.readingC, `readings[${i}].readingC`);
    const key = `${r.locationId}@${r.at.getTime()}`;
    if (seen.has(key)) {
      throw new PyrometryInputError(`readings[${i}]`, `second reading for location ${r.locationId} at ${r.at.toISOString()} (first is readings[${seen.get(key)}])`);
    }
    seen.set(key, i);
  });

  // One correction per location: corrections are looked up at the setpoint ([S15]).
  const instrument =
    input.testInstrumentCalibration && input.testInstrumentCalibration.length > 0
      ? applyCalibrationCorrection(setpointC, input.testInstrumentCalibration, { path: 'testInstrumentCalibration' })
      : null;
  if (instrument && !instrument.applied) problems.push(`test instrument calibration does not cover ${setpointC} °C and may not be extrapolated`);
  const correctionByLocation = new Map<string, number>();
  input.locations.forEach((loc, i) => {
    const c = applyCalibrationCorrection(setpointC, loc.calibration, { path: `locations[${i}].calibration` });
    if (!c.applied) {
      problems.push(
        c.flag === 'no-calibration-points'
          ? `location ${loc.locationId}: test sensor ${loc.testSensorId} has no calibration points`
          : `location ${loc.locationId}: test sensor ${loc.testSensorId} is calibrated ${c.calibratedRangeC?.lowC}–${c.calibratedRangeC?.highC} °C; ${setpointC} °C is outside and may not be extrapolated`,
      );
    }
    correctionByLocation.set(loc.locationId, c.correctionC + (instrument?.correctionC ?? 0));
  });

  const judged: JudgedReading[] = input.readings.map((r) => {
    const correctedC = r.readingC + (correctionByLocation.get(r.locationId) ?? 0);
    return { locationId: r.locationId, at: r.at, readingC: r.readingC, correctedC, deviationC: round(correctedC - setpointC, 9) };
  });
  for (const loc of input.locations) {
    if (!judged.some((j) => j.locationId === loc.locationId)) problems.push(`location ${loc.locationId} has no readings`);
  }
  if (judged.length === 0) problems.push('the survey has no readings');

  const looked = lookupKeyed(reference, 'uniformityTolerance', reference.uniformityTolerance, input);
  let tolerance: LimitUsed | null = null;
  if (looked.sourced.value === null) {
    problems.push(`no uniformity tolerance in ${looked.key}: ${looked.sourced.note}`);
  } else {
    const t = looked.sourced.value;
    const resolved = resolveLimit({ plusMinusC: t.plusMinusC, plusMinusF: t.plusMinusF, pctOfReading: null }, unit, setpointC, 'limitUnit');
    tolerance = { key: looked.key, ...resolved, confirmed: looked.sourced.confirmed, note: looked.sourced.note };
    if (!looked.sourced.confirmed) warnings.push(`tolerance not confirmed: ${looked.sourced.note}`);
  }

  const failedReadings = tolerance ? judged.filter((j) => !withinBand(j.deviationC, tolerance.bandC)) : [];
  // Worst reading: largest |deviation|; ties keep the earlier reading in input order (stable).
  const worst = judged.reduce<JudgedReading | null>((w, j) => (w === null || Math.abs(j.deviationC) > Math.abs(w.deviationC) ? j : w), null);
  const correctedValues = judged.map((j) => j.correctedC);
  const minC = correctedValues.length ? Math.min(...correctedValues) : null;
  const maxC = correctedValues.length ? Math.max(...correctedValues) : null;

  const perLocation: LocationSummary[] = input.locations.map((loc) => {
    const mine = judged.filter((j) => j.locationId === loc.locationId);
    const values = mine.map((j) => j.correctedC);
    const worstHere = mine.reduce<JudgedReading | null>((w, j) => (w === null || Math.abs(j.deviationC) > Math.abs(w.deviationC) ? j : w), null);
    return {
      locationId: loc.locationId,
      testSensorId: loc.testSensorId,
      readingCount: mine.length,
      minC: values.length ? Math.min(...values) : Number.NaN,
      maxC: values.length ? Math.max(...values) : Number.NaN,
      worstDeviationC: worstHere?.deviationC ?? Number.NaN,
      failedCount: failedReadings.filter((f) => f.locationId === loc.locationId).length,
      correctionC: correctionByLocation.get(loc.locationId) ?? 0,
    };
  });

  // Data collection: flag gaps longer than the stated logging interval (a warning, since the
  // value is unconfirmed for current revisions, practice.md §1.1 TUS [S69]).
  const maxGapS = reference.tusMaxSampleIntervalS.value;
  if (maxGapS !== null) {
    for (const loc of input.locations) {
      const times = judged.filter((j) => j.locationId === loc.locationId).map((j) => j.at.getTime()).sort((a, b) => a - b);
      for (let k = 1; k < times.length; k += 1) {
        const gapS = (times[k] - times[k - 1]) / 1000;
        if (gapS > maxGapS) {
          warnings.push(
            `location ${loc.locationId}: ${gapS} s between readings at ${new Date(times[k - 1]).toISOString()} and ${new Date(times[k]).toISOString()}, more than ${maxGapS} s (${reference.tusMaxSampleIntervalS.note})`,
          );
        }
      }
    }
  }

  const fraction = reference.hotColdRelocationFraction;
  const fractionValue = fraction.value;
  const hotColdRelocation =
    tolerance && fractionValue !== null && judged.length > 0
      ? {
          fraction: fractionValue,
          highSideWithin: judged.every((j) => j.deviationC <= fractionValue * tolerance.bandC + COMPARISON_EPSILON),
          lowSideWithin: judged.every((j) => j.deviationC >= -fractionValue * tolerance.bandC - COMPARISON_EPSILON),
          confirmed: fraction.confirmed,
          note: fraction.note,
        }
      : null;

  const verdict: Verdict = problems.length > 0 || tolerance === null ? 'invalid' : failedReadings.length === 0 ? 'pass' : 'fail';
  return {
    verdict,
    passed: verdict === 'pass',
    equipmentId: input.equipmentId,
    setpointC,
    tolerance,
    bandC: tolerance ? { lowC: setpointC - tolerance.bandC, highC: setpointC + tolerance.bandC } : null,
    readingCount: judged.length,
    minC,
    maxC,
    spreadC: minC !== null && maxC !== null ? round(maxC - minC, 9) : null,
    worst,
    perLocation,
    failedReadings,
    hotColdRelocation,
    problems,
    warnings,
  };
}
