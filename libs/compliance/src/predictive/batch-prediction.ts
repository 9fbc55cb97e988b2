import type { CriterionVerdict, HoldAdvice, PredictionBasis, PredictionResult, VerdictLevel } from '@ausline/contracts';
import { createBathState, MODEL_VERSION, type BathState, type PredictOutput } from '@ausline/metallurgy';
import type { TemperatureChannelSeries } from '../process-window/types.js';
import { calibrationsInForce, labCalibrationBasis, RAW_BANDS_FIELD } from '../calibration/bands.js';
import { worstVerdict } from '../verdicts/bands.js';
import { verdictFindings, type PredictedFinding } from '../verdicts/findings.js';
import { mergeBathChannels, type BathSeries } from './bath-series.js';
import { buildBatchSetup, type SetupRecords } from './batch-setup.js';
import { digestOf } from './digest.js';
import {
  advisorCriteria,
  CHECKPOINT_S,
  checkpointOf,
  COARSE_STEP_S,
  evaluateState,
  drain,
  projectionPoints,
  searchEarliestSteps,
  walk,
  walkSteps,
  type Checkpoint,
  type EvaluationContext,
} from './evaluate.js';

/**
 * The live prediction of one batch (pure; the worker loads the records, stores what comes out).
 *
 * 1. The model setup from the records (heat, section, furnace zones, load events, agitator, line, spec).
 * 2. The bath series: the agreeing bath thermocouples on a 10 s grid from INTO_BATH (bath-series.ts).
 * 3. Incremental kinetics: the saved engine state is advanced over the settled points that arrived since the last
 *    run; if anything before its horizon changed (back-filled data, a new heat revision, another spec, another model
 *    version) it starts again from scratch. Provisional points (not all thermocouples reported yet) are advanced on
 *    a copy only. The engine makes incremental equal to from-scratch; checkpoints lie on a fixed grid, so the stored
 *    result of a chain of runs equals a run from scratch over the same data (tested).
 * 4. The judged history: while the load is in the bath, the rest of the scheduled hold is projected at the bath
 *    temperature being logged (mean of the last 5 min), so the verdicts say whether the load WILL conform; once it is
 *    out, the logged history up to OUT_OF_BATH is judged.
 * 5. Verdicts on every criterion the spec names, the hold advisor (earliest safe end at the logged temperature, and
 *    how much longer than at the spec's nominal temperature), and the deviation findings.
 */

export const PREDICTION_STATE_FORMAT = 'ausline.prediction-state/1';
/** The temperature "being logged": time-weighted mean of the bath over the last this many seconds. */
export const HOLD_TEMPERATURE_WINDOW_S = 300;
/** The hold advisor looks this far ahead at most (12 h). */
export const MAX_ADVISOR_HORIZON_S = 12 * 3600;
/** Points kept in the result's bainite band (decimated beyond this). */
export const MAX_BAND_POINTS = 240;

export interface PredictionState {
  format: typeof PREDICTION_STATE_FORMAT;
  modelVersion: string;
  setupDigest: string;
  judgeDigest: string;
  /** The engine state advanced over the first `count` (settled) points of the bath series. */
  settled: { count: number; untilS: number; historyDigest: string };
  engine: BathState;
  /** Checkpoints at or before the settled horizon. */
  checkpoints: Checkpoint[];
  /** The hold advisor at the spec's nominal bath temperature (cached: it depends only on the setup and criteria). */
  nominal: { key: string; earliestSafeEndS: number | null; limiting: string[] } | null;
}

export interface BatchPredictionInput extends SetupRecords {
  batchId: string;
  heatId: string;
  heatRevision: number;
  specVersionId: string;
  /** Batch.scheduledHoldMin (null: the spec's minimum hold is the plan). */
  scheduledHoldMin: number | null;
  /** Per-reading correction of bath thermocouples (pyrometry), if any. */
  correctBathReading?: ((channelId: string, tMs: number, valueC: number) => number) | null;
  /** INTO_BATH of the next load into the same bath while this one has no OUT_OF_BATH: its log ends there. */
  nextLoadIntoBathMs?: number | null;
}

export type BatchPredictionOutcome =
  | { kind: 'not-ready'; reason: string }
  | {
      kind: 'predicted';
      phase: 'IN_BATH' | 'DONE';
      result: PredictionResult;
      state: PredictionState;
      inputDigest: string;
      /** Device time of the last bath reading used, epoch ms. */
      watermarkMs: number;
      findings: PredictedFinding[];
      /** The nominal member has reached 95 % of its ceiling in the LOGGED history (milestone). */
      ceilingReached: boolean;
      /** criterion:verdict pairs, sorted: a change is a milestone. */
      verdictSignature: string;
      /** The run advanced the saved state (true) or started from scratch (false). */
      incremental: boolean;
    };

export function predictBatch(input: BatchPredictionInput, previous: PredictionState | null): BatchPredictionOutcome {
  return drain(predictBatchSteps(input, previous));
}

/**
 * `predictBatch` in steps: yields after every checkpoint evaluated, so a process that also serves requests can give
 * its event loop a turn (a long batch from scratch with 1,000 members takes seconds).
 */
export function* predictBatchSteps(input: BatchPredictionInput, previous: PredictionState | null): Generator<void, BatchPredictionOutcome, void> {
  const intoBathMs = input.events.intoBathMs;
  if (intoBathMs === undefined) return { kind: 'not-ready', reason: 'the load is not in the bath yet (no INTO_BATH)' };
  const built = buildBatchSetup(input);
  const setup = built.setup;
  // A load without OUT_OF_BATH: its log ends at the next load's INTO_BATH into the same bath, and never runs past
  // the advisor's horizon (12 h: it has left the bath by then, whatever the records say).
  const cutByNextLoad = input.events.outOfBathMs === undefined && input.nextLoadIntoBathMs != null && input.nextLoadIntoBathMs > intoBathMs;
  const openEndMs = input.events.outOfBathMs === undefined ? Math.min(cutByNextLoad ? (input.nextLoadIntoBathMs as number) : Infinity, intoBathMs + MAX_ADVISOR_HORIZON_S * 1000) : undefined;
  const series = mergeBathChannels(input.channels as readonly TemperatureChannelSeries[], {
    intoBathMs,
    outOfBathMs: input.events.outOfBathMs,
    ...(openEndMs !== undefined ? { hardEndMs: openEndMs } : {}),
    maxGapS: input.window.maxChannelGapS,
    maxDiffC: input.window.twinTolerance.maxDiffC,
    plausible: input.window.plausible,
    correct: input.correctBathReading ?? null,
  });
  if (series.points.length === 0) return { kind: 'not-ready', reason: 'no bath temperature logged since INTO_BATH' };

  const setupDigest = digestOf({ modelVersion: MODEL_VERSION, setup });
  // The lab calibration in force corrects every checkpoint's bands: a new one re-judges from scratch.
  const labCalibration = calibrationsInForce(input.labCalibration);
  const judgeDigest = digestOf(Object.keys(labCalibration).length ? { criteria: input.criteria, labCalibration } : { criteria: input.criteria });
  const points = series.points.map(([t, v]) => [t, roundTo(v, 4)] as [number, number]);
  const nominalBathC = (input.window.bath.minTempC + input.window.bath.maxTempC) / 2;
  const ctx: EvaluationContext = {
    setup,
    criteria: input.criteria,
    labCalibration,
    section: { shape: input.section.shape, sizeMm: input.section.sizeMm },
    nominalBathC,
    transferS: setup.transferS,
  };

  // ---- 3. incremental kinetics over the settled points, then the provisional ones on a copy
  let settledCount = series.settledCount;
  let engine: BathState;
  let checkpoints: Checkpoint[];
  let startAt: number;
  let incremental = false;
  if (previous && resumable(previous, setupDigest, judgeDigest, points)) {
    engine = previous.engine;
    checkpoints = previous.checkpoints.slice();
    startAt = previous.settled.count;
    incremental = true;
    // Points the saved state already took in stay settled (their digest matched), whatever the horizon says now.
    settledCount = Math.max(settledCount, startAt);
  } else {
    engine = createBathState(setup);
    checkpoints = [];
    startAt = 0;
  }
  const collect = (into: Checkpoint[]) => (s: BathState, tS: number) => {
    into.push(checkpointOf(s, ctx, tS));
  };
  engine = yield* walkSteps(engine, points.slice(startAt, Math.max(startAt, settledCount)), CHECKPOINT_S, collect(checkpoints));
  const settledState = engine;
  const settledCheckpoints = checkpoints.slice();
  const provisional: Checkpoint[] = [];
  const current = yield* walkSteps(settledState, points.slice(Math.max(startAt, settledCount)), CHECKPOINT_S, collect(provisional));
  const loggedCheckpoints = [...settledCheckpoints, ...provisional];
  const loggedUntilS = points[points.length - 1][0];

  // ---- 4. the judged history
  const phase: 'IN_BATH' | 'DONE' = input.events.outOfBathMs !== undefined ? 'DONE' : 'IN_BATH';
  const holdBathTempC = recentMean(points, HOLD_TEMPERATURE_WINDOW_S);
  const scheduledBasis: 'batch' | 'spec-min-hold' = input.scheduledHoldMin !== null ? 'batch' : 'spec-min-hold';
  const scheduledEndS = (input.scheduledHoldMin ?? input.window.bath.minHoldMin) * 60;
  const actualEndS = phase === 'DONE' ? ((input.events.outOfBathMs as number) - intoBathMs) / 1000 : null;
  // In the bath past its scheduled end, the load will come out no earlier than now: judge the hold logged so far.
  const targetS = actualEndS ?? Math.max(scheduledEndS, loggedUntilS);
  let judged = current;
  let judgedUntilS = loggedUntilS;
  let projection: PredictionBasis['projection'] = null;
  const projectedCheckpoints: Checkpoint[] = [];
  const warnings = [...built.warnings];
  // States at the projected (coarse) checkpoints, kept to refine the hold advisor's time between two of them.
  const projectedStates: BathState[] = [];
  if (targetS > loggedUntilS + PROJECTION_TOLERANCE_S) {
    const basis = phase === 'DONE' ? 'log-gap' : scheduledBasis;
    judged = yield* walkSteps(current, projectionPoints(loggedUntilS, targetS, holdBathTempC), COARSE_STEP_S, (s, tS) => {
      projectedCheckpoints.push(checkpointOf(s, ctx, tS));
      projectedStates.push(s);
    });
    judgedUntilS = targetS;
    projection = { fromS: loggedUntilS, toS: targetS, bathTempC: roundTo(holdBathTempC, 2), basis } as PredictionBasis['projection'];
    if (phase === 'DONE') {
      warnings.push(`bath: the bath log ends ${Math.round(targetS - loggedUntilS)} s before OUT_OF_BATH; the rest of the hold is taken at ${holdBathTempC.toFixed(1)} °C`);
    }
  }
  if (cutByNextLoad) {
    warnings.push(`bath: no OUT_OF_BATH, but the next load entered this bath at ${new Date(input.nextLoadIntoBathMs as number).toISOString()}: this load's log ends there`);
  }
  if (series.disagreementS > 0) {
    warnings.push(`bath: the bath thermocouples disagreed by more than ${input.window.twinTolerance.maxDiffC} °C for ${series.disagreementS} s; their mean was used`);
  }
  if (series.longestGapS > input.window.maxChannelGapS) warnings.push(`bath: no bath temperature known for ${series.longestGapS} s; the kinetics interpolate across it`);

  // ---- 5. hold advisor
  const advisorHorizonS = Math.min(MAX_ADVISOR_HORIZON_S, Math.max(1.5 * input.window.bath.maxHoldMin * 60, targetS + 3600, 4 * 3600));
  const allCheckpoints = [...loggedCheckpoints, ...projectedCheckpoints];
  let earliestSafeEndS: number | null = null;
  let limiting: string[] = [];
  let reason: string | null = null;
  const loggedOk = firstOk(loggedCheckpoints);
  const projectedOk = projectedCheckpoints.findIndex((c) => c.ok);
  if (loggedOk) {
    earliestSafeEndS = loggedOk.tS;
    limiting = failingBefore(loggedCheckpoints, loggedOk.tS);
  } else if (projectedOk >= 0) {
    // Refine between the previous projected checkpoint (or the end of the log) and the first one that is ok.
    const fromState = projectedOk === 0 ? current : projectedStates[projectedOk - 1];
    const fromS = projectedOk === 0 ? loggedUntilS : projectedCheckpoints[projectedOk - 1].tS;
    const okS = projectedCheckpoints[projectedOk].tS;
    earliestSafeEndS = okS;
    limiting = projectedOk === 0 ? (loggedCheckpoints.at(-1)?.failing ?? []) : projectedCheckpoints[projectedOk - 1].failing;
    yield* walkSteps(fromState, projectionPoints(fromS, okS, holdBathTempC), CHECKPOINT_S, (s, tS) => {
      if (tS >= okS) return true;
      const c = checkpointOf(s, ctx, tS);
      if (c.ok) {
        earliestSafeEndS = tS;
        return true;
      }
      limiting = c.failing;
      return false;
    });
  } else {
    const searched = yield* searchEarliestSteps(judged, ctx, judgedUntilS, holdBathTempC, advisorHorizonS, allCheckpoints.at(-1)?.failing ?? []);
    earliestSafeEndS = searched.earliestS;
    limiting = searched.limiting;
    reason = searched.reason;
  }

  const nominalKey = digestOf({ setupDigest, judgeDigest, nominalBathC, advisorHorizonS });
  let nominal = previous && previous.nominal && previous.nominal.key === nominalKey ? previous.nominal : null;
  if (!nominal) nominal = yield* nominalAdvice(ctx, nominalBathC, advisorHorizonS, nominalKey);

  const evaluation = evaluateState(judged, ctx, {
    holdEndS: judgedUntilS,
    projected: projection !== null && phase === 'IN_BATH',
    hold: earliestSafeEndS === null ? null : { earliestSafeEndS, endS: targetS, endBasis: actualEndS !== null ? 'actual' : scheduledBasis, limiting },
  });
  const verdicts = evaluation.verdicts;
  const out = evaluation.output;

  const iso = (s: number | null) => (s === null ? null : new Date(intoBathMs + s * 1000).toISOString());
  const hold: HoldAdvice = {
    earliestSafeEndAt: iso(earliestSafeEndS),
    scheduledEndAt: iso(scheduledEndS),
    extraHoldMin: earliestSafeEndS !== null && nominal.earliestSafeEndS !== null ? roundTo((earliestSafeEndS - nominal.earliestSafeEndS) / 60, 1) : null,
    bathOffsetC: roundTo(holdBathTempC - nominalBathC, 1),
    earliestSafeEndS,
    scheduledHoldMin: input.scheduledHoldMin ?? input.window.bath.minHoldMin,
    scheduledBasis,
    actualEndAt: actualEndS === null ? null : new Date(input.events.outOfBathMs as number).toISOString(),
    holdBathTempC: roundTo(holdBathTempC, 1),
    nominalBathC,
    nominalEarliestSafeEndS: nominal.earliestSafeEndS,
    limiting,
    reason,
  };

  const band = decimate(
    [...allCheckpoints.filter((c) => c.tS <= judgedUntilS), { tS: judgedUntilS, lo: out.bands.fractionAtEnd.p05, hi: out.bands.fractionAtEnd.p95 } as Checkpoint]
      .filter((c, i, arr) => i === 0 || c.tS > arr[i - 1].tS)
      .filter((c) => c.lo !== null && c.hi !== null)
      .map((c) => [c.tS, c.lo as number, c.hi as number] as [number, number, number]),
    MAX_BAND_POINTS,
  );
  const ceilingReached = current.kin.time95S[0] >= 0;
  const basis: PredictionBasis = {
    phase,
    loggedUntilS,
    ceilingReachedInLog: ceilingReached,
    judgedUntilS,
    projection,
    inputs: {
      heatId: input.heatId,
      heatRevision: input.heatRevision,
      specVersionId: input.specVersionId,
      material: setup.material,
      section: { shape: input.section.shape, sizeMm: input.section.sizeMm },
      austenitize: built.basis.austenitize,
      transferS: built.basis.transferS,
      agitation: built.basis.agitation,
      agitationSource: built.basis.agitationSource,
      heatTransferWPerM2K: built.basis.heatTransferWPerM2K,
      grainSizeAstm: built.basis.grainSizeAstm,
      ambientC: built.basis.ambientC,
      bathMeanC: out.t0.bathTempC,
      bathChannels: series.channels as PredictionBasis['inputs']['bathChannels'],
      uncertainty: { samples: setup.uncertainty.samples, seed: setup.uncertainty.seed },
      ...(setup.calibration ? { calibration: setup.calibration } : {}),
    },
    // Which lab calibration corrected the bands (null: none in force; bands = rawBands).
    labCalibration: labCalibrationBasis(labCalibration, { applied: evaluation.labHooks }),
  };
  const result: PredictionResult = {
    ...(out as PredictOutput & Record<string, unknown>),
    bainite: { ...out.bainite, band, loggedUntilS },
    warnings: [...new Set([...warnings, ...out.warnings])],
    verdicts,
    overall: worstVerdict(verdicts.map((v) => v.verdict as VerdictLevel)),
    hold,
    basis,
    // The uncalibrated bands the lab calibration is learned against (calibration/bands.ts RAW_BANDS_FIELD).
    [RAW_BANDS_FIELD]: evaluation.rawBands,
  } as PredictionResult;

  const settledUntilS = settledCount > 0 ? points[settledCount - 1][0] : 0;
  const state: PredictionState = {
    format: PREDICTION_STATE_FORMAT,
    modelVersion: MODEL_VERSION,
    setupDigest,
    judgeDigest,
    settled: { count: settledCount, untilS: settledUntilS, historyDigest: historyDigest(points, settledCount) },
    engine: settledState,
    checkpoints: settledCheckpoints,
    nominal,
  };
  const inputDigest = digestOf({
    modelVersion: MODEL_VERSION,
    setupDigest,
    judgeDigest,
    nominalKey,
    events: input.events,
    nextLoadIntoBathMs: cutByNextLoad ? input.nextLoadIntoBathMs : null,
    scheduledHoldMin: input.scheduledHoldMin,
    bath: points,
    warnings: built.warnings,
    channels: series.channels,
  });
  const lastReadingMs = intoBathMs + (series.lastReadingS ?? loggedUntilS) * 1000;
  return {
    kind: 'predicted',
    phase,
    result,
    state,
    inputDigest,
    watermarkMs: Math.round(lastReadingMs),
    findings: verdictFindings(verdicts, { batchId: input.batchId, modelVersion: MODEL_VERSION, projected: projection !== null && phase === 'IN_BATH', bathTempC: out.t0.bathTempC }),
    ceilingReached,
    verdictSignature: verdictSignature(verdicts),
    incremental,
  };
}

/** A projection shorter than this is not worth one (the grid floor of the last reading). */
const PROJECTION_TOLERANCE_S = 15;

export function verdictSignature(verdicts: readonly CriterionVerdict[]): string {
  return verdicts
    .map((v) => `${v.criterion}:${v.verdict}`)
    .sort()
    .join(',');
}

function resumable(prev: PredictionState, setupDigest: string, judgeDigest: string, points: ReadonlyArray<[number, number]>): boolean {
  if (prev.format !== PREDICTION_STATE_FORMAT || prev.modelVersion !== MODEL_VERSION) return false;
  if (prev.setupDigest !== setupDigest || prev.judgeDigest !== judgeDigest) return false;
  if (prev.settled.count > points.length) return false;
  return historyDigest(points, prev.settled.count) === prev.settled.historyDigest;
}

function historyDigest(points: ReadonlyArray<[number, number]>, count: number): string {
  return digestOf(points.slice(0, count));
}

function firstOk(list: readonly Checkpoint[]): Checkpoint | null {
  return list.find((c) => c.ok) ?? null;
}

function failingBefore(list: readonly Checkpoint[], tS: number): string[] {
  let failing: string[] = [];
  for (const c of list) {
    if (c.tS >= tS) break;
    failing = c.failing;
  }
  return failing;
}

/** Time-weighted mean of the last `windowS` seconds of a grid series. */
function recentMean(points: ReadonlyArray<[number, number]>, windowS: number): number {
  const end = points[points.length - 1][0];
  let sum = 0;
  let dt = 0;
  for (let i = points.length - 1; i > 0; i--) {
    const [t1, v1] = points[i];
    const [t0, v0] = points[i - 1];
    if (t1 <= end - windowS) break;
    const from = Math.max(t0, end - windowS);
    const frac = (from - t0) / (t1 - t0);
    const vFrom = v0 + frac * (v1 - v0);
    sum += 0.5 * (vFrom + v1) * (t1 - from);
    dt += t1 - from;
  }
  return dt > 0 ? sum / dt : points[points.length - 1][1];
}

/** The hold advisor for an isothermal bath at the spec's nominal temperature, from the bath entry. */
function* nominalAdvice(ctx: EvaluationContext, nominalC: number, horizonS: number, key: string): Generator<void, NonNullable<PredictionState['nominal']>, void> {
  const start = createBathState(ctx.setup);
  const first = walk(start, [[0, nominalC]], CHECKPOINT_S, () => undefined);
  const r = yield* searchEarliestSteps(first, ctx, 0, nominalC, horizonS, []);
  return { key, earliestSafeEndS: r.earliestS, limiting: r.limiting };
}

function decimate<T>(list: T[], max: number): T[] {
  if (list.length <= max) return list;
  const step = Math.ceil((list.length - 1) / (max - 1));
  const out: T[] = [];
  for (let i = 0; i < list.length - 1; i += step) out.push(list[i]);
  out.push(list[list.length - 1]);
  return out;
}

function roundTo(x: number, digits: number): number {
  const k = 10 ** digits;
  const r = Math.round(x * k) / k;
  return Object.is(r, -0) ? 0 : r;
}

export { COARSE_STEP_S };
export type { BathSeries };
