import type { AcceptanceCriteria, CriterionVerdict } from '@ausline/contracts';
import {
  advanceBath,
  batchModel,
  DEFAULT_CHEMISTRY_SD_WT_PCT,
  equivalentRoundDiameterMm,
  finalizeBatch,
  LI_S_OF_ONE,
  percentilesInPlace,
  sectionSizeMm,
  type BathState,
  type BandQuantity,
  type BatchSetup,
  type PredictOutput,
} from '@ausline/metallurgy';
import { CALIBRATED_QUANTITIES, labBandHooks, type CalibratedQuantity, type EngineBand, type ProductCalibrations } from '../calibration/bands.js';
import type { NumericBand } from '../verdicts/bands.js';
import { HOLD_DEPENDENT_CRITERIA, judgePrediction, type ExtraBands, type HoldJudgement, type JudgeContext } from '../verdicts/judge.js';

/**
 * Evaluating a bath state: finalize it (libs/metallurgy), derive the few bands the engine does not report, and
 * judge the spec's criteria. Plus the walkers the live prediction, the hold advisor and the heat advice share:
 * advancing a state over a series with an evaluation at every checkpoint (a fixed grid from the bath entry, so an
 * incremental run and a run from scratch evaluate the very same states).
 */

/** Checkpoints every 2 min from the bath entry: band of the bainite curve, and "may the load leave now?". */
export const CHECKPOINT_S = 120;
/** Coarse step of the hold advisor's search beyond the judged end, refined to CHECKPOINT_S. */
export const COARSE_STEP_S = 600;
export const PROJECTION_GRID_S = 10;

export interface EvaluationContext {
  setup: BatchSetup;
  criteria: AcceptanceCriteria;
  /**
   * The product's running lab calibrations (calibration/running.ts), only those in force. Each evaluation corrects
   * its raw bands of the calibrated quantities by them (engine hook: bias, plus extra spread when the lab scatters
   * more than the ensemble), so verdicts, the hold advisor and the heat advice judge the calibrated bands.
   */
  labCalibration?: ProductCalibrations;
  section: JudgeContext['section'];
  nominalBathC: number | null;
  transferS: number;
}

export interface Evaluation {
  /** Calibrated by the lab calibration in force (the raw output when none is). */
  output: PredictOutput;
  /** The engine's uncalibrated bands of the calibrated quantities (what the calibration is learned against). */
  rawBands: Record<CalibratedQuantity, EngineBand>;
  /** The engine-hook calibration applied (null: none in force, output = raw). */
  labHooks: Partial<Record<CalibratedQuantity, { bias: number; sd: number }>> | null;
  extra: ExtraBands;
  verdicts: CriterionVerdict[];
}

/** Criteria the hold advisor waits for: the spec's hold-dependent ones, or complete transformation if it names none. */
export function advisorCriteria(criteria: AcceptanceCriteria, material: BatchSetup['material']): AcceptanceCriteria {
  const names = judgedCriteriaNames(criteria, material);
  if (names.some((n) => HOLD_DEPENDENT_CRITERIA.has(n as never))) return criteria;
  return { ...criteria, requireCompleteTransformation: true };
}

/** The criteria a spec names (as verdict criterion ids), without evaluating anything. */
export function judgedCriteriaNames(a: AcceptanceCriteria, material: BatchSetup['material']): string[] {
  const out: string[] = [];
  if (a.minBainiteFraction !== undefined) out.push('min-bainite');
  if (a.requireCompleteTransformation) out.push('complete-transformation');
  if (a.maxFreshMartensiteFraction !== undefined) out.push('max-fresh-martensite');
  if (a.maxBlockyAusteniteFraction !== undefined) out.push('max-blocky-austenite');
  if (a.minFilmToBlockRatio !== undefined) out.push('min-film-to-block');
  if (a.maxRetainedAusteniteFraction !== undefined) out.push('max-retained-austenite');
  if (a.minMsMarginC !== undefined) out.push('ms-margin');
  if (a.minBsMarginC !== undefined) out.push('bs-margin');
  if (a.maxUpperProductsFraction !== undefined) out.push('max-upper-products');
  if (a.requireStableRetainedAustenite) out.push('stable-retained-austenite');
  if (a.minSiPlusAlWtPct !== undefined) out.push('min-si-plus-al');
  if (a.hardness) out.push('hardness');
  if (a.tensile && (a.tensile.minTensileMPa !== undefined || a.tensile.maxTensileMPa !== undefined)) out.push('tensile');
  if (material === 'ductile-iron' && a.adiProcessWindow) out.push('adi-stage-i', 'adi-stage-ii');
  return out;
}

/** Bath − Ms and Bs − bath per ensemble member at the mean bath temperature (percentiles over members 1..n). */
export function marginBands(setup: BatchSetup, bathMeanC: number): { msMarginC: NumericBand; bsMarginC: NumericBand } {
  const model = batchModel(setup);
  const m = model.members;
  const n = model.size;
  const pick = (f: (k: number) => number): NumericBand => {
    if (n <= 1) {
      const v = round(f(0), 1);
      return { p05: v, p50: v, p95: v };
    }
    const values = new Float64Array(n - 1);
    for (let k = 1; k < n; k++) values[k - 1] = f(k);
    const [a, b, c] = percentilesInPlace(values, [0.05, 0.5, 0.95]);
    return { p05: round(a, 1), p50: round(b, 1), p95: round(c, 1) };
  };
  // Ms per member: van Bohemen on the member's chemistry with the model's Ms error. Bs: the reported van Bohemen Bs
  // moved by the member's spread of Li's Bs (chemistry + its 25 °C error), our way to give Bs a band.
  const bsNominal = model.critical.bsC;
  return {
    msMarginC: pick((k) => bathMeanC + m.thermocoupleOffsetC[k] - m.msBulkC[k]),
    bsMarginC: pick((k) => bsNominal + (m.bainiteStartC[k] - model.liBainiteStartC) - (bathMeanC + m.thermocoupleOffsetC[k])),
  };
}

export function evaluateState(
  state: BathState,
  ctx: EvaluationContext,
  at: { holdEndS: number; projected: boolean; criteria?: AcceptanceCriteria; hold?: HoldJudgement | null },
): Evaluation {
  const { output, rawBands, labHooks } = finalizeCalibrated(state, ctx.labCalibration);
  const extra = marginBands(ctx.setup, output.t0.bathTempC);
  const s = ctx.setup;
  const judgeContext: JudgeContext = {
    chemistryWtPct: s.chemistryWtPct,
    holdEndS: at.holdEndS,
    projected: at.projected,
    bathTempC: output.t0.bathTempC,
    nominalBathC: ctx.nominalBathC,
    transferS: ctx.transferS,
    section: ctx.section,
    equivalentDiameterMm: equivalentRoundDiameterMm(s.section.shape, sectionSizeMm(s.section)),
    ambientC: s.ambientC,
    siSdWtPct: s.uncertainty.chemistrySdWtPct?.Si ?? DEFAULT_CHEMISTRY_SD_WT_PCT.Si ?? 0,
    alSdWtPct: s.uncertainty.chemistrySdWtPct?.Al ?? DEFAULT_CHEMISTRY_SD_WT_PCT.Al ?? 0,
  };
  const verdicts = judgePrediction({ prediction: output, criteria: at.criteria ?? ctx.criteria, extra, context: judgeContext, hold: at.hold ?? null });
  return { output, rawBands, labHooks, extra, verdicts };
}

/**
 * Finalizes a state raw (the spec version's model calibration only, which the setup carries), then – when a lab
 * calibration is in force – again with its engine hooks derived from those raw bands. libs/metallurgy merges the
 * setup's calibration with the hook's `bands`, so a spec's hardnessFactor and the like keep applying underneath.
 */
export function finalizeCalibrated(state: BathState, labCalibration: ProductCalibrations | undefined): Pick<Evaluation, 'output' | 'rawBands' | 'labHooks'> {
  const raw = finalizeBatch(state);
  const rawBands = {} as Record<CalibratedQuantity, EngineBand>;
  for (const q of CALIBRATED_QUANTITIES) rawBands[q] = raw.bands[q];
  const labHooks = labCalibration ? labBandHooks(rawBands, labCalibration) : null;
  const output = labHooks ? finalizeBatch(state, { calibration: { bands: labHooks } }) : raw;
  return { output, rawBands, labHooks };
}

export interface Checkpoint {
  tS: number;
  /** p05 / p95 of the bainite (ausferrite) fraction at tS. */
  lo: number | null;
  hi: number | null;
  /** Every hold-dependent criterion the advisor waits for is conforming at tS. */
  ok: boolean;
  failing: string[];
}

/** The bands each hold-dependent criterion is judged on. When those of every failing criterion stand still over a
 *  coarse step (to the engine's rounding), a longer hold will not make them conform: the search stops there. */
const CRITERION_BANDS: Record<string, readonly BandQuantity[]> = {
  'min-bainite': ['bainiticFerrite'],
  'complete-transformation': ['timeTo95PctS', 'bainiticFerrite'],
  'max-fresh-martensite': ['freshMartensite'],
  'adi-stage-i': ['freshMartensite'],
  'max-blocky-austenite': ['blockyAustenite'],
  'min-film-to-block': ['filmToBlockyRatio'],
  'max-retained-austenite': ['retainedAusteniteFraction'],
  'stable-retained-austenite': ['residualAusteniteMsC'],
  hardness: ['hardnessHV'],
  tensile: ['tensileMPa'],
};

function failingBandsKey(output: PredictOutput, failing: readonly string[]): string {
  return failing
    .flatMap((c) => CRITERION_BANDS[c] ?? ['bainiticFerrite'])
    .map((q) => {
      const b = output.bands[q];
      return `${q}:${b.p05}|${b.p50}|${b.p95}`;
    })
    .join(';');
}

/** The advisor's view of a state at tS (its checkpoint). */
export function checkpointOf(state: BathState, ctx: EvaluationContext, tS: number): Checkpoint {
  return checkpointDetail(state, ctx, tS).checkpoint;
}

function checkpointDetail(state: BathState, ctx: EvaluationContext, tS: number): { checkpoint: Checkpoint; bandsKey: string } {
  const criteria = advisorCriteria(ctx.criteria, ctx.setup.material);
  const e = evaluateState(state, ctx, { holdEndS: tS, projected: false, criteria });
  const failing = e.verdicts.filter((v) => HOLD_DEPENDENT_CRITERIA.has(v.criterion as never) && v.verdict !== 'conforming').map((v) => v.criterion);
  const band = e.output.bands.fractionAtEnd;
  return { checkpoint: { tS, lo: band.p05, hi: band.p95, ok: failing.length === 0, failing }, bandsKey: failingBandsKey(e.output, failing) };
}

/**
 * Advances `state` over `points` ([tS, °C], increasing), evaluating a checkpoint at every multiple of `everyS`
 * (> 0) among the points. Points at or before the state's last sample are ignored by the engine.
 * `onCheckpoint` returning true ends the walk early (returns the state at that checkpoint).
 */
export function walk(
  state: BathState,
  points: ReadonlyArray<readonly [number, number]>,
  everyS: number,
  onCheckpoint: (state: BathState, tS: number) => boolean | void,
): BathState {
  return drain(walkSteps(state, points, everyS, onCheckpoint));
}

/** `walk` in steps: yields after each checkpoint (a caller may give its event loop a turn there). */
export function* walkSteps(
  state: BathState,
  points: ReadonlyArray<readonly [number, number]>,
  everyS: number,
  onCheckpoint: (state: BathState, tS: number) => boolean | void,
): Generator<void, BathState, void> {
  let s = state;
  let from = 0;
  for (let i = 0; i < points.length; i++) {
    const t = points[i][0];
    if (t > 0 && isMultiple(t, everyS) && (s.last === null || t > s.last.tS)) {
      s = advanceBath(s, points.slice(from, i + 1) as Array<[number, number]>);
      from = i + 1;
      if (onCheckpoint(s, t) === true) return s;
      yield;
    }
  }
  if (from < points.length) s = advanceBath(s, points.slice(from) as Array<[number, number]>);
  return s;
}

/** Runs a step generator to its end. */
export function drain<T>(steps: Generator<void, T, void>): T {
  for (;;) {
    const next = steps.next();
    if (next.done) return next.value;
  }
}

export function isMultiple(t: number, step: number): boolean {
  const q = t / step;
  return Math.abs(q - Math.round(q)) < 1e-9;
}

/** Isothermal points on the projection grid after `fromS` (exclusive) up to `toS` (inclusive). */
export function projectionPoints(fromS: number, toS: number, tempC: number): Array<[number, number]> {
  const out: Array<[number, number]> = [];
  const first = Math.floor(fromS / PROJECTION_GRID_S + 1e-9) + 1;
  for (let k = first; k * PROJECTION_GRID_S <= toS + 1e-9; k++) out.push([k * PROJECTION_GRID_S, tempC]);
  if (out.length === 0 || out[out.length - 1][0] < toS - 1e-9) out.push([toS, tempC]);
  return out;
}

/** No member's transformation can progress any more (every extent clock past S(1)). */
export function saturated(state: BathState): boolean {
  return state.kin.sum.every((x) => x >= LI_S_OF_ONE);
}

export interface SearchResult {
  /** First checkpoint at which the load may leave, s from the bath entry; null = none before the horizon. */
  earliestS: number | null;
  /** The criteria that failed at the last checkpoint before it (what set the time), or those failing at the horizon. */
  limiting: string[];
  /** Why there is no earliest time (null when there is one). */
  reason: string | null;
}

/**
 * Searches forward from `state` (at `fromS`) at constant `tempC` for the first checkpoint where the advisor is
 * satisfied: coarse steps of COARSE_STEP_S, then CHECKPOINT_S steps inside the bracket. `lastFailing` = what failed
 * at the last checkpoint known before `fromS`.
 */
export function searchEarliest(
  state: BathState,
  ctx: EvaluationContext,
  fromS: number,
  tempC: number,
  horizonS: number,
  lastFailing: string[],
): SearchResult {
  return drain(searchEarliestSteps(state, ctx, fromS, tempC, horizonS, lastFailing));
}

/** `searchEarliest` in steps (yields after each evaluation). */
export function* searchEarliestSteps(
  state: BathState,
  ctx: EvaluationContext,
  fromS: number,
  tempC: number,
  horizonS: number,
  lastFailing: string[],
): Generator<void, SearchResult, void> {
  let prev = state;
  let prevS = fromS;
  let failing = lastFailing;
  let prevKey: string | null = null;
  for (let t = (Math.floor(fromS / COARSE_STEP_S + 1e-9) + 1) * COARSE_STEP_S; t <= horizonS + 1e-9; t += COARSE_STEP_S) {
    const next = advanceBath(prev, projectionPoints(prevS, t, tempC));
    const { checkpoint: cp, bandsKey } = checkpointDetail(next, ctx, t);
    if (cp.ok) {
      // Refine inside (prevS, t] on the checkpoint grid.
      let found: number = t;
      let refineFailing = failing;
      yield* walkSteps(prev, projectionPoints(prevS, t, tempC), CHECKPOINT_S, (s, tS) => {
        if (tS >= t) return true;
        const c = checkpointOf(s, ctx, tS);
        if (c.ok) {
          found = tS;
          return true;
        }
        refineFailing = c.failing;
        return false;
      });
      return { earliestS: found, limiting: refineFailing, reason: null };
    }
    failing = cp.failing;
    yield;
    if (saturated(next) || bandsKey === prevKey) {
      return {
        earliestS: null,
        limiting: failing,
        reason: `no hold meets ${failing.join(', ')} at ${tempC.toFixed(0)} °C: ${failing.length === 1 ? 'its' : 'their'} predicted band stopped changing (the transformation is over or stalled), so a longer hold does not help`,
      };
    }
    prev = next;
    prevS = t;
    prevKey = bandsKey;
  }
  return {
    earliestS: null,
    limiting: failing,
    reason: `no hold up to ${Math.round(horizonS / 60)} min meets ${failing.join(', ')} at ${tempC.toFixed(0)} °C`,
  };
}

function round(x: number, digits: number): number {
  const k = 10 ** digits;
  return Math.round(x * k) / k;
}
