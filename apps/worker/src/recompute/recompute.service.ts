import { Inject, Injectable } from '@nestjs/common';
import { ProcessWindow, type LiveEvent } from '@ausline/contracts';
import { DeviationRepository, PyrometryRepository, RecomputeInputsRepository, type DeviationChange, type PrismaClient } from '@ausline/db';
import { LiveEventsPublisher } from '../events/live-events.js';
import { WorkerMetrics } from '../ops/worker-metrics.js';
import { PRISMA } from '../prisma.js';
import { InvalidSpecError, RECOMPUTE_STEPS, type RecomputeContext, type RecomputeStep } from './steps.js';

export interface RecomputeOutcome {
  batchId: string;
  findings: number;
  changes: DeviationChange[];
  staleCleared: boolean;
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
 * the whole history, and the results are written in one transaction. Safe to run twice, concurrently or
 * after a crash:
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

  constructor(
    @Inject(PRISMA) private readonly prisma: PrismaClient,
    private readonly events: LiveEventsPublisher,
    private readonly metrics: WorkerMetrics,
  ) {
    this.inputs = new RecomputeInputsRepository(prisma);
    this.deviations = new DeviationRepository(prisma);
    this.pyrometry = new PyrometryRepository(prisma);
  }

  async recompute(batchId: string): Promise<RecomputeOutcome> {
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
          for (const step of this.steps) step.run(ctx);
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
        return { batchId, lineId: inputs.batch.lineId, findings: ctx.findings.length, changes: [...pyrometry.changes, ...changes], staleCleared };
      },
      { timeout: RECOMPUTE_TX_TIMEOUT_MS, maxWait: 10_000 },
    );

    if ('invalidSpec' in outcome) throw outcome.invalidSpec;
    for (const c of outcome.changes) this.metrics.deviationChangesTotal.inc({ kind: c.kind });
    const at = new Date().toISOString();
    const events: LiveEvent[] = [
      { type: 'batch.updated', batchId, lineId: outcome.lineId, at },
      ...outcome.changes.map(
        (c): LiveEvent => ({ type: 'deviation.changed', deviationId: c.deviationId, batchId: c.batchId, lineId: c.lineId, rule: c.rule, status: c.status, at }),
      ),
    ];
    await this.events.publish(events);
    return { batchId, findings: outcome.findings, changes: outcome.changes, staleCleared: outcome.staleCleared };
  }
}
