import type { Prisma } from '@ausline/db';
import type { PredictionMilestone } from '@ausline/contracts';
import type { BatchPredictionOutcome } from '@ausline/compliance';
import type { LatestPrediction } from './prediction-inputs.js';

type Predicted = Extract<BatchPredictionOutcome, { kind: 'predicted' }>;

export type PredictionWrite =
  | { kind: 'unchanged' }
  | {
      kind: 'inserted' | 'updated';
      version: number;
      milestone: PredictionMilestone | null;
      /** The saved state was advanced over the new readings (false: computed from scratch). */
      incremental: boolean;
    };

/**
 * Stores a batch prediction without flooding the table. Per batch: the rolling latest row (highest version,
 * `milestone` null) is updated in place while nothing notable happens. A prediction at a milestone – the load enters
 * the bath, the logged transformation reaches 95 % of its ceiling, the load leaves the bath, a verdict changes – is a
 * new row labelled with it, and the row before it stays as it was (so both sides of a change are kept); the next
 * prediction after a milestone is a new rolling row. Only the latest row keeps the engine state (the previous one is
 * pruned to NULL when a row is inserted). Same input digest and model version as the latest row = nothing written
 * (a retried job stores nothing twice). Runs inside the recompute's transaction.
 */
export async function storePrediction(
  tx: Prisma.TransactionClient,
  batchId: string,
  outcome: Predicted,
  latest: LatestPrediction | null,
  inputsReadAt: Date,
): Promise<PredictionWrite> {
  if (latest && latest.inputDigest === outcome.inputDigest && latest.modelVersion === outcome.result.modelVersion) return { kind: 'unchanged' };
  const milestone = milestoneOf(outcome, latest);
  // When the inputs were read: a prediction from an older snapshot must not replace this one (see the service).
  const result = { ...outcome.result, basis: { ...outcome.result.basis, inputsReadAt: inputsReadAt.toISOString() } };
  const data = {
    modelVersion: outcome.result.modelVersion,
    inputDigest: outcome.inputDigest,
    watermark: new Date(outcome.watermarkMs),
    phase: outcome.phase,
    milestone,
    result: result as unknown as Prisma.InputJsonValue,
    state: outcome.state as unknown as Prisma.InputJsonValue,
  };
  if (!latest) {
    await tx.prediction.create({ data: { batchId, version: 1, ...data } });
    return { kind: 'inserted', version: 1, milestone, incremental: outcome.incremental };
  }
  if (latest.milestone !== null || milestone !== null) {
    // After a kept row, or at a milestone: a new row. The previous row stays as it is (a milestone, or the last
    // prediction before this one's milestone: both sides of a verdict change are kept); its state is superseded.
    const version = latest.version + 1;
    await tx.prediction.create({ data: { batchId, version, ...data } });
    await tx.$executeRaw`UPDATE "Prediction" SET "state" = NULL, "updatedAt" = now() WHERE "id" = ${latest.id}::uuid`;
    return { kind: 'inserted', version, milestone, incremental: outcome.incremental };
  }
  await tx.prediction.update({ where: { id: latest.id }, data });
  return { kind: 'updated', version: latest.version, milestone, incremental: outcome.incremental };
}

function milestoneOf(outcome: Predicted, latest: LatestPrediction | null): PredictionMilestone | null {
  if (!latest) return outcome.phase === 'DONE' ? 'out-of-bath' : 'into-bath';
  if (outcome.phase === 'DONE' && latest.phase !== 'DONE') return 'out-of-bath';
  if (outcome.ceilingReached && !latest.ceilingReached) return 'ceiling-reached';
  if (outcome.verdictSignature !== latest.verdictSignature) return 'verdict-change';
  return null;
}
