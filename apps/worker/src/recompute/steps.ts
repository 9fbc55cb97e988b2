import { ProcessWindow } from '@ausline/contracts';
import { PROCESS_WINDOW_RULES, evaluateProcessWindow, type ProcessWindowMeasures } from '@ausline/compliance';
import type { DeviationFindingInput, RecomputeInputs } from '@ausline/db';

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
}

export interface RecomputeStep {
  name: string;
  run(ctx: RecomputeContext): void;
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
    });
    ctx.findings.push(...result.findings);
    ctx.evaluatedRules.push(...PROCESS_WINDOW_RULES);
    ctx.processWindow = result.measures;
  },
};

/**
 * The recompute pipeline, in order.
 *
 * SEAM for the metallurgical prediction (a later issue; nothing is predicted or faked here): a
 * `predictionStep` goes after processWindowStep. It will read the heat chemistry and the bath history
 * from ctx.inputs (the loader then also brings the heat and the last saved Prediction state), advance the
 * kinetics over the new samples only, put the new Prediction (model version, input digest, watermark)
 * on the context for the service to store in the same transaction, and add acceptance-criteria findings
 * (bainite fraction, fresh martensite, blocky austenite, hardness band ...) with their rule ids to
 * ctx.findings and ctx.evaluatedRules.
 */
export const RECOMPUTE_STEPS: readonly RecomputeStep[] = [processWindowStep];
