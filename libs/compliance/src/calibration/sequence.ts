// A product's lab comparisons judged in order, each against the calibration learned from the ones before it
// (prequential: a result never calibrates its own band), and the running calibration after each. A result of a
// load with an assignable cause (assignable-cause.ts) is judged the same way but not folded in.

import { bandSd, calibrateBand, type Band, type CalibratedBand, type CalibratedQuantity } from './bands.js';
import type { CalibrationExclusion } from './assignable-cause.js';
import { compareWithBand, type BandComparison } from './lab.js';
import { DEFAULT_DISCOUNT, DEFAULT_MIN_RESULTS, startCalibration, summarizeCalibration, updateCalibration, type CalibrationState, type CalibrationSummary } from './running.js';

export interface SequencedObservation {
  /** Caller's key (e.g. the LabComparison row). */
  key: string;
  measured: number;
  /** Raw ensemble band of the batch's latest prediction; null = no prediction to compare with. */
  raw: Band | null;
  /** Set when the load had an assignable cause: judged against its band, but left out of the calibration. */
  excludedBy?: CalibrationExclusion | null;
}

export interface SequencedJudgement {
  key: string;
  /** Measured − raw p50 (null without a prediction). */
  residual: number | null;
  judgedWith: CalibratedBand | null;
  comparison: BandComparison | null;
  /** Calibration after folding this result in (unchanged when it had no prediction or was excluded). */
  after: CalibrationSummary | null;
  stateAfter: CalibrationState | null;
  /** Why it was left out of the calibration (null: folded in, or nothing to fold). */
  excludedBy: CalibrationExclusion | null;
}

export interface SequenceOptions {
  quantity: CalibratedQuantity;
  discount?: number;
  minResults?: number;
}

/**
 * Judges each observation against its raw band corrected by the calibration of the results before it, then
 * folds its residual in unless it is excluded (excludedBy). The prior spread is the first compared prediction's ensemble spread (bandSd); a
 * degenerate band (zero width) falls back to 1 % of |p50| (or 1 unit).
 */
export function judgeSequence(observations: readonly SequencedObservation[], options: SequenceOptions): { judgements: SequencedJudgement[]; final: CalibrationState | null } {
  const minResults = options.minResults ?? DEFAULT_MIN_RESULTS;
  let state: CalibrationState | null = null;
  const judgements: SequencedJudgement[] = [];
  for (const o of observations) {
    if (!o.raw) {
      judgements.push({ key: o.key, residual: null, judgedWith: null, comparison: null, after: state ? summarizeCalibration(state) : null, stateAfter: state, excludedBy: null });
      continue;
    }
    const judgedWith = calibrateBand(o.raw, state, { minResults, quantity: options.quantity });
    const comparison = compareWithBand(o.measured, judgedWith.band);
    const residual = o.measured - o.raw.p50;
    if (o.excludedBy) {
      // Judged, not learned from: nor does it set the prior spread (that is the first folded-in prediction's).
      judgements.push({ key: o.key, residual, judgedWith, comparison, after: state ? summarizeCalibration(state) : null, stateAfter: state, excludedBy: o.excludedBy });
      continue;
    }
    if (!state) {
      const sd = bandSd(o.raw);
      state = startCalibration(sd > 0 ? sd : Math.max(0.01 * Math.abs(o.raw.p50), 1e-6), { discount: options.discount ?? DEFAULT_DISCOUNT });
    }
    state = updateCalibration(state, residual);
    judgements.push({ key: o.key, residual, judgedWith, comparison, after: summarizeCalibration(state), stateAfter: state, excludedBy: null });
  }
  return { judgements, final: state };
}
