// Calibration corrections of sensors and instruments. A certificate gives a correction at each
// calibrated temperature; between points the lab either interpolates linearly or takes the nearest
// point and must record which (practice.md §1.1 sensors [S15]); outside the calibrated points
// nothing may be extrapolated ([S19], CQI-9 wording; AMS 2750 works the same way). So a value
// outside the range comes back uncorrected with a flag, and callers decide what that means (a
// test judged with it is invalid; a production channel raises a finding).

import { PyrometryInputError, requireFinite } from './errors.js';
import type { CalibrationPoint } from './types.js';

export type CorrectionMethod = 'linear' | 'nearest';

export interface CorrectionOptions {
  /**
   * Temperature at which to look the correction up. Corrections are chosen by the setpoint
   * (practice.md §1.1 [S15]), so tests pass their setpoint here; defaults to the value itself.
   */
  readonly lookupTempC?: number;
  readonly method?: CorrectionMethod;
  /** Field path used in error messages. */
  readonly path?: string;
}

export interface CorrectionResult {
  /** The corrected value, or the value unchanged when no correction could be applied. */
  readonly correctedC: number;
  readonly correctionC: number;
  readonly applied: boolean;
  /** null when applied; otherwise why not. */
  readonly flag: null | 'no-calibration-points' | 'outside-calibrated-range';
  /** The calibrated range [lowC, highC], or null without points. */
  readonly calibratedRangeC: { readonly lowC: number; readonly highC: number } | null;
  readonly method: CorrectionMethod;
}

/** Validates and sorts calibration points; duplicates or non-numbers name the offending point. */
export function normalizeCalibrationPoints(points: readonly CalibrationPoint[], path = 'calibrationPoints'): CalibrationPoint[] {
  points.forEach((p, i) => {
    requireFinite(p.atC, `${path}[${i}].atC`);
    requireFinite(p.correctionC, `${path}[${i}].correctionC`);
  });
  const sorted = points.map((p, i) => ({ ...p, i })).sort((a, b) => a.atC - b.atC);
  for (let k = 1; k < sorted.length; k += 1) {
    if (sorted[k].atC === sorted[k - 1].atC) {
      // Two corrections at one temperature make the correction ambiguous; refuse rather than pick.
      throw new PyrometryInputError(`${path}[${sorted[k].i}].atC`, `duplicates the temperature of ${path}[${sorted[k - 1].i}] (${sorted[k].atC} °C)`);
    }
  }
  return sorted.map(({ atC, correctionC }) => ({ atC, correctionC }));
}

/**
 * Applies a calibration correction to valueC: corrected = value + correction(lookup temperature),
 * with the correction interpolated between the two neighbouring points (or the nearest one), and
 * never extrapolated. The raw value is never changed by the caller's storage: this returns a new
 * number.
 */
export function applyCalibrationCorrection(
  valueC: number,
  calibrationPoints: readonly CalibrationPoint[],
  options: CorrectionOptions = {},
): CorrectionResult {
  const path = options.path ?? 'calibrationPoints';
  const method = options.method ?? 'linear';
  requireFinite(valueC, 'valueC');
  const lookupC = requireFinite(options.lookupTempC ?? valueC, 'lookupTempC');
  const points = normalizeCalibrationPoints(calibrationPoints, path);
  if (points.length === 0) {
    return { correctedC: valueC, correctionC: 0, applied: false, flag: 'no-calibration-points', calibratedRangeC: null, method };
  }
  const lowC = points[0].atC;
  const highC = points[points.length - 1].atC;
  const calibratedRangeC = { lowC, highC };
  if (lookupC < lowC || lookupC > highC) {
    return { correctedC: valueC, correctionC: 0, applied: false, flag: 'outside-calibrated-range', calibratedRangeC, method };
  }
  const correctionC = correctionAt(points, lookupC, method);
  return { correctedC: valueC + correctionC, correctionC, applied: true, flag: null, calibratedRangeC, method };
}

function correctionAt(points: readonly CalibrationPoint[], lookupC: number, method: CorrectionMethod): number {
  // Points are sorted and lookupC is within [first, last], so an upper neighbour exists.
  const upper = points.findIndex((p) => p.atC >= lookupC);
  if (points[upper].atC === lookupC) return points[upper].correctionC;
  const below = points[upper - 1];
  const above = points[upper];
  if (method === 'nearest') {
    // On an exact midpoint the lower point wins: a fixed, documented tie rule keeps results stable.
    return lookupC - below.atC <= above.atC - lookupC ? below.correctionC : above.correctionC;
  }
  const fraction = (lookupC - below.atC) / (above.atC - below.atC);
  return below.correctionC + fraction * (above.correctionC - below.correctionC);
}

/** Adds corrections that apply in series (e.g. test sensor and test instrument). */
export function applyCorrectionsInSeries(
  valueC: number,
  chain: readonly { readonly points: readonly CalibrationPoint[]; readonly path: string }[],
  options: Omit<CorrectionOptions, 'path'> = {},
): { correctedC: number; steps: CorrectionResult[] } {
  let correctedC = valueC;
  const steps: CorrectionResult[] = [];
  for (const link of chain) {
    // Each correction is looked up at the same temperature (the setpoint when given), and added.
    const step = applyCalibrationCorrection(valueC, link.points, { ...options, path: link.path });
    steps.push(step);
    correctedC += step.correctionC;
  }
  return { correctedC, steps };
}
