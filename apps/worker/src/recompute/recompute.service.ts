import { Inject, Injectable } from '@nestjs/common';
import { ProcessWindow, type LiveEvent } from '@ausline/contracts';
import { DeviationRepository, PyrometryRepository, RecomputeInputsRepository, type DeviationChange, type PrismaClient } from '@ausline/db';
import { LiveEventsPublisher } from '../events/live-events.js';
import { WorkerMetrics } from '../ops/worker-metrics.js';
import { PRISMA } from '../prisma.js';
import { WORKER_OPTIONS, type WorkerRuntimeOptions } from '../worker-config.js';
import { loadPredictionInputs } from './prediction-inputs.js';
import { storePrediction, type PredictionWrite } from './prediction-store.js';
import { InvalidSpecError, PREDICTION_STEPS, RECOMPUTE_STEPS, type RecomputeContext, type RecomputeStep } from './steps.js';

export interface RecomputeOutcome {
  batchId: string;
  findings: number;
  changes: DeviationChange[];
  staleCleared: boolean;
  /** What happened to the batch's prediction rows (null: nothing to predict, or deferred). */
  prediction: PredictionWrite | null;
  /** The prediction was left to the recompute already queued behind this one (see RecomputeOptions). */
  predictionDeferred: boolean;
}

export interface RecomputeOptions {
  /**
   * Asked once the process-window result is committed and published: true leaves the prediction to a newer
   * recompute of the batch that is already queued behind this one (it reads newer data and predicts; the worker
   * bounds how long a batch's prediction may be put off). Absent: always predict.
   */
  deferPrediction?: () => Promise<boolean>;
}

export class BatchNotFoundError extends Error {
  constructor(readonly batchId: string) {
    super(`batch ${batchId} does not exist`);
    this.name = 'BatchNotFoundError';
  }
}

/** Longest a recompute transaction may run (Prisma's interactive transaction timeout). */
const RECOMPUTE_TX_TIMEOUT_MS = 60_000;

/**
 * Recomputes one batch from Postgres, the source of truth: everything is reloaded, every step runs over
 * the whole history, and the results are written in one transaction; the metallurgical prediction follows in a
 * second one (see predict()). Safe to run twice, concurrently or after a crash:
 *  - a transaction-scoped advisory lock per batch serializes recomputes of one batch across all worker
 *    processes, and the inputs are read after taking it, so the last recompute to commit saw all data
 *    committed before it started;
 *  - deviations are upserted by dedupKey (refresh, never duplicate);
 *  - the stale flag is cleared only if it was set before this recompute started.
 * Live events go out after the commit.
 */
@Injectable()
export class RecomputeService {
  private readonly inputs: RecomputeInputsRepository;
  private readonly deviations: DeviationRepository;
  /** Pyrometry (PW, issue 8): calibration corrections, equipment compliance, suspect product. */
  private readonly pyrometry: PyrometryRepository;
  private readonly steps: readonly RecomputeStep[] = RECOMPUTE_STEPS;
  private readonly predictionSteps: readonly RecomputeStep[] = PREDICTION_STEPS;

  constructor(
    @Inject(PRISMA) private readonly prisma: PrismaClient,
    private readonly events: LiveEventsPublisher,
    private readonly metrics: WorkerMetrics,
    @Inject(WORKER_OPTIONS) private readonly options: WorkerRuntimeOptions,
  ) {
    this.inputs = new RecomputeInputsRepository(prisma);
    this.deviations = new DeviationRepository(prisma);
    this.pyrometry = new PyrometryRepository(prisma);
  }

  async recompute(batchId: string, options: RecomputeOptions = {}): Promise<RecomputeOutcome> {
    const outcome = await this.prisma.$transaction(
      async (tx) => {
        await tx.$executeRaw`SELECT pg_advisory_xact_lock(hashtextextended(${`ausline:recompute:${batchId}`}, 0))`;
        const [{ startedAt }] = await tx.$queryRaw<{ startedAt: Date }[]>`SELECT clock_timestamp() AS "startedAt"`;

        // Readings just before a step still count (sample-and-hold up to the allowed gap); load that far back.
        const spec = await tx.batch.findUnique({ where: { id: batchId }, select: { specVersion: { select: { processWindow: true } } } });
        if (!spec) throw new BatchNotFoundError(batchId);
        const window = ProcessWindow.safeParse(spec.specVersion.processWindow);
        const leadMs = window.success ? window.data.maxChannelGapS * 1000 : 0;

        const inputs = await this.inputs.load(batchId, { leadMs }, tx);
        if (!inputs) throw new BatchNotFoundError(batchId);

        // --- pyrometry (PW, issue 8) ---------------------------------------------------------------------
        // Rules read the channels corrected by the sensor/instrument certificates (raw samples stay as
        // stored); the batch gets its equipment-compliance and suspect-product findings; suspect-product
        // deviations that an overdue test opens on other batches come back as changes to publish.
        const pyrometry = await this.pyrometry.forRecompute(inputs, startedAt, tx);
        const ctx: RecomputeContext = {
          inputs: { ...inputs, channels: pyrometry.channels },
          nowMs: startedAt.getTime(),
          findings: [...pyrometry.findings],
          evaluatedRules: [...pyrometry.rules],
          processWindow: null,
        };
        // --- end pyrometry -----------------------------------------------------------------------------
        try {
          for (const step of this.steps) await step.run(ctx);
        } catch (error) {
          if (!(error instanceof InvalidSpecError)) throw error;
          // Retrying cannot help and the reconciler must not re-enqueue it forever: clear the stale flag
          // (guarded as usual), keep the stored deviations as they are, and fail the job loudly.
          await this.inputs.clearStaleIfCovered(batchId, startedAt, tx);
          return { invalidSpec: error } as const;
        }

        const changes = await this.deviations.syncFindings(
          { batchId, lineId: inputs.batch.lineId, productSpecId: inputs.batch.productSpecId },
          ctx.findings,
          { rules: ctx.evaluatedRules },
          tx,
        );
        const staleCleared = await this.inputs.clearStaleIfCovered(batchId, startedAt, tx);
        return { batchId, lineId: inputs.batch.lineId, findings: ctx.findings.length, changes: [...pyrometry.changes, ...changes], staleCleared, ctx, startedAt };
      },
      { timeout: RECOMPUTE_TX_TIMEOUT_MS, maxWait: 10_000 },
    );

    if ('invalidSpec' in outcome) throw outcome.invalidSpec;
    await this.publish(batchId, outcome.lineId, outcome.changes, true);
    if (options.deferPrediction && (await options.deferPrediction())) {
      return { batchId, findings: outcome.findings, changes: outcome.changes, staleCleared: outcome.staleCleared, prediction: null, predictionDeferred: true };
    }

    // The metallurgical prediction takes from tens of milliseconds (one more increment) to seconds (a long batch
    // from scratch with 1,000 ensemble members): it runs in its own transaction after the process-window result is
    // committed and published, so a bath excursion reaches the screens without waiting for the kinetics.
    const predicted = await this.predict(batchId, outcome.ctx, outcome.startedAt);
    await this.publish(batchId, outcome.lineId, predicted.changes, predicted.write !== null && predicted.write.kind !== 'unchanged');
    return {
      batchId,
      findings: outcome.findings + predicted.findings,
      changes: [...outcome.changes, ...predicted.changes],
      staleCleared: outcome.staleCleared,
      prediction: predicted.write,
      predictionDeferred: false,
    };
  }

  /**
   * The prediction step over the inputs the first transaction read (corrected channels included), in a second
   * transaction under the same per-batch lock. Its deviations are synced for the prediction rules only. A prediction
   * from an older snapshot never replaces one from a newer snapshot (two recomputes of one batch overlapping).
   */
  private async predict(batchId: string, first: RecomputeContext, readAt: Date): Promise<{ findings: number; changes: DeviationChange[]; write: PredictionWrite | null }> {
    return this.prisma.$transaction(
      async (tx) => {
        await tx.$executeRaw`SELECT pg_advisory_xact_lock(hashtextextended(${`ausline:recompute:${batchId}`}, 0))`;
        const inputs = first.inputs;
        const ctx: RecomputeContext = { inputs, nowMs: first.nowMs, findings: [], evaluatedRules: [], processWindow: first.processWindow };
        ctx.predictionInputs = await loadPredictionInputs(tx, inputs, this.options.prediction);
        const latest = ctx.predictionInputs?.latest ?? null;
        if (latest?.readAtMs !== undefined && latest.readAtMs !== null && latest.readAtMs > readAt.getTime()) return { findings: 0, changes: [], write: null };
        for (const step of this.predictionSteps) await step.run(ctx);
        if (ctx.evaluatedRules.length === 0) return { findings: 0, changes: [], write: null };
        const write = ctx.prediction?.kind === 'predicted' ? await storePrediction(tx, batchId, ctx.prediction, latest, readAt) : null;
        const changes = await this.deviations.syncFindings(
          { batchId, lineId: inputs.batch.lineId, productSpecId: inputs.batch.productSpecId },
          ctx.findings,
          { rules: ctx.evaluatedRules },
          tx,
        );
        return { findings: ctx.findings.length, changes, write };
      },
      { timeout: RECOMPUTE_TX_TIMEOUT_MS, maxWait: 10_000 },
    );
  }

  private async publish(batchId: string, lineId: string, changes: readonly DeviationChange[], batchUpdated: boolean): Promise<void> {
    for (const c of changes) this.metrics.deviationChangesTotal.inc({ kind: c.kind });
    const at = new Date().toISOString();
    const events: LiveEvent[] = [
      ...(batchUpdated ? [{ type: 'batch.updated', batchId, lineId, at } as LiveEvent] : []),
      ...changes.map(
        (c): LiveEvent => ({ type: 'deviation.changed', deviationId: c.deviationId, batchId: c.batchId, lineId: c.lineId, rule: c.rule, status: c.status, at }),
      ),
    ];
    if (events.length) await this.events.publish(events);
  }
}
