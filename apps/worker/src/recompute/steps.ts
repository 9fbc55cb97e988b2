import { AcceptanceCriteria, PREDICTION_RULES, ProcessWindow } from '@ausline/contracts';
import {
  PROCESS_WINDOW_RULES,
  PredictionInputError,
  evaluateProcessWindow,
  predictBatchSteps,
  type BatchPredictionOutcome,
  type ProcessWindowMeasures,
} from '@ausline/compliance';
import type { DeviationFindingInput, RecomputeInputs } from '@ausline/db';
import { setImmediate as nextTurn } from 'node:timers/promises';
import type { PredictionStepInputs } from './prediction-inputs.js';

/**
 * What one recompute carries from step to step. Steps are pure with respect to the database: they read
 * `inputs` and add findings; the service stores everything in one transaction afterwards.
 */
export interface RecomputeContext {
  inputs: RecomputeInputs;
  /** Evaluation time (database clock at the start of the recompute), epoch ms. */
  nowMs: number;
  findings: DeviationFindingInput[];
  /** Rules whose deviations this recompute owns: those not found again are cleared. */
  evaluatedRules: string[];
  processWindow: ProcessWindowMeasures | null;
  /** Loaded by the service for the prediction step; null/absent = nothing to predict (not in the bath yet). */
  predictionInputs?: PredictionStepInputs | null;
  /** Set by the prediction step: the prediction to store (same transaction). */
  prediction?: BatchPredictionOutcome | null;
}

/** Raised (MINOR) when the records do not allow a prediction, e.g. a heat without carbon; cleared once they do. */
export const PREDICTION_UNAVAILABLE_RULE = 'prediction-unavailable';

export interface RecomputeStep {
  name: string;
  /** Synchronous, or a promise only to give the event loop turns during a long computation (no I/O). */
  run(ctx: RecomputeContext): void | Promise<void>;
}

/** A spec version whose stored JSON does not parse: the batch cannot be evaluated until it is fixed. */
export class InvalidSpecError extends Error {
  constructor(readonly specVersionId: string, readonly issues: string[]) {
    super(`product spec version ${specVersionId} has an invalid process window: ${issues.join('; ')}`);
    this.name = 'InvalidSpecError';
  }
}

/** Process-window rules over the raw history (libs/compliance). */
export const processWindowStep: RecomputeStep = {
  name: 'process-window',
  run(ctx) {
    const parsed = ProcessWindow.safeParse(ctx.inputs.spec.processWindow);
    if (!parsed.success) {
      throw new InvalidSpecError(
        ctx.inputs.batch.specVersionId,
        parsed.error.issues.map((i) => `${i.path.join('.') || '(root)'}: ${i.message}`),
      );
    }
    const result = evaluateProcessWindow({
      batchId: ctx.inputs.batch.id,
      window: parsed.data,
      events: ctx.inputs.events,
      channels: ctx.inputs.channels,
      nowMs: ctx.nowMs,
      timeZone: ctx.inputs.batch.lineTimeZone,
    });
    ctx.findings.push(...result.findings);
    ctx.evaluatedRules.push(...PROCESS_WINDOW_RULES);
    ctx.processWindow = result.measures;
  },
};

/**
 * The metallurgical prediction (issue 4): advances the saved state over the new bath readings, judges the spec's
 * acceptance criteria on the prediction's bands and runs the hold advisor (libs/compliance predictBatch, pure). Its
 * findings are the predicted verdicts that are at risk or nonconforming; the prediction itself goes on the context
 * for the service to store in the recompute's transaction.
 */
export const predictionStep: RecomputeStep = {
  name: 'prediction',
  async run(ctx) {
    const p = ctx.predictionInputs;
    if (!p) return;
    const window = ProcessWindow.safeParse(ctx.inputs.spec.processWindow);
    const criteria = AcceptanceCriteria.safeParse(ctx.inputs.spec.acceptanceCriteria);
    if (!window.success) return; // processWindowStep has already failed the recompute for it
    if (!criteria.success) {
      throw new InvalidSpecError(
        ctx.inputs.batch.specVersionId,
        criteria.error.issues.map((i) => `acceptanceCriteria.${i.path.join('.')}: ${i.message}`),
      );
    }
    const batch = ctx.inputs.batch;
    let outcome: BatchPredictionOutcome;
    try {
      const steps = predictBatchSteps(
        {
          batchId: batch.id,
          heatId: p.heat.id,
          heatRevision: p.heat.revision,
          specVersionId: batch.specVersionId,
          scheduledHoldMin: p.batch.scheduledHoldMin,
          heat: { material: p.heat.material, chemistryWtPct: p.heat.chemistryWtPct },
          section: { shape: p.batch.sectionShape, sizeMm: p.batch.sectionSizeMm },
          window: window.data,
          criteria: criteria.data,
          events: ctx.inputs.events,
          channels: ctx.inputs.channels,
          agitatorRpm: p.agitatorRpm,
          lineHeatTransfer: p.lineHeatTransfer,
          uncertainty: p.uncertainty,
          nextLoadIntoBathMs: p.nextLoadIntoBathMs,
          labCalibration: p.labCalibration,
        },
        p.latest?.state ?? null,
      );
      // One checkpoint per turn of the event loop: a worker sharing its process (tests, a small plant's single
      // container) keeps answering while a long batch is predicted from scratch.
      for (;;) {
        const next = steps.next();
        if (next.done) {
          outcome = next.value;
          break;
        }
        await nextTurn();
      }
    } catch (error) {
      if (!(error instanceof PredictionInputError)) throw error;
      ctx.evaluatedRules.push(...PREDICTION_RULES, PREDICTION_UNAVAILABLE_RULE);
      ctx.findings.push({
        rule: PREDICTION_UNAVAILABLE_RULE,
        severity: 'MINOR',
        dedupKey: `${batch.id}:${PREDICTION_UNAVAILABLE_RULE}`,
        channelId: null,
        message: `No metallurgical prediction for this batch: ${error.issues.join('; ')}`,
        details: { issues: error.issues },
      });
      return;
    }
    // Not in the bath yet, or no bath reading yet: keep whatever was predicted and judged before.
    if (outcome.kind === 'not-ready') return;
    ctx.evaluatedRules.push(...PREDICTION_RULES, PREDICTION_UNAVAILABLE_RULE);
    ctx.prediction = outcome;
    ctx.findings.push(...outcome.findings);
  },
};

/** The recompute pipeline, in order: the process-window rules over the raw history (first transaction). */
export const RECOMPUTE_STEPS: readonly RecomputeStep[] = [processWindowStep];

/**
 * Then the metallurgical prediction, in a second transaction once the first is committed and published (the service
 * loads ctx.predictionInputs before and stores ctx.prediction after, in that transaction).
 */
export const PREDICTION_STEPS: readonly RecomputeStep[] = [predictionStep];
