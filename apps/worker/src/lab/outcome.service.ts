import { Inject, Injectable } from '@nestjs/common';
import type { LiveEvent } from '@ausline/contracts';
import {
  CALIBRATED_QUANTITIES,
  CALIBRATION_METHOD,
  DEFAULT_MIN_RESULTS,
  ASSIGNABLE_CAUSE_SEVERITIES,
  MISMATCH_RULE,
  PROCESS_WINDOW_RULES,
  calibrationExclusion,
  driftMetricUnit,
  driftSpecContext,
  judgeSequence,
  labObservations,
  measuredHardnessDriftValue,
  mismatchFinding,
  predictedDriftValues,
  processRecord,
  rawPredictedBand,
  summarizeCalibration,
  summarizeExclusions,
  type CalibratedQuantity,
  type CalibrationExclusion,
  type DriftMetric,
  type DriftSpecContext,
  type LabResultLike,
} from '@ausline/compliance';
import { DeviationRepository, Prisma, RecomputeInputsRepository, canonicalJson, type DeviationChange, type PrismaClient } from '@ausline/db';
import { LiveEventsPublisher } from '../events/live-events.js';
import { WorkerMetrics } from '../ops/worker-metrics.js';
import { PRISMA } from '../prisma.js';
import { BatchNotFoundError } from '../recompute/recompute.service.js';

type Tx = Prisma.TransactionClient;

/** Bath logs covering less of the hold than this are not charted (their gaps are deviations of their own). */
export const MIN_BATH_COVERAGE = 0.8;

export interface OutcomeResult {
  batchId: string;
  productSpecId: string;
  lineId: string;
  /** The batch's charted values changed: its product's drift charts need a new evaluation. */
  driftValuesChanged: boolean;
  comparisons: number;
  changes: DeviationChange[];
  /**
   * The product's calibration in force changed (a quantity came into force, or its state moved while in force):
   * the product's loads still in the bath, whose verdicts and hold advice are live, to be recomputed with it.
   */
  recalibratedOpenBatchIds: string[];
}

interface LoadedPrediction {
  id: string;
  version: number;
  phase: string;
  modelVersion: string;
  inputDigest: string;
  result: unknown;
}

const EVENT_FIELD = { CHARGED: 'chargedMs', OUT_OF_FURNACE: 'outOfFurnaceMs', INTO_BATH: 'intoBathMs', OUT_OF_BATH: 'outOfBathMs' } as const;

/**
 * What came out of one batch, after each of its recomputes (issue 4, items 4 and 5):
 *  - its charted values (DriftValue): the prediction-based metrics from its latest prediction once the load
 *    is out of the bath and the prediction is final, its measured hardness, its mean bath temperature over
 *    the hold (bath of its INTO_BATH event, sample-and-hold up to the allowed gap);
 *  - each lab result against the predicted band of its latest prediction, corrected by the product's running
 *    calibration of the results compared before it; outside the band → 'model-process-mismatch' deviation.
 *    Every comparison of the product (per quantity) is re-judged in order, so a changed prediction of an older
 *    batch moves the calibration of everything after it consistently; only what changed is written. A result
 *    of a load with an assignable cause (a MAJOR/CRITICAL process-window deviation) is judged but left out of
 *    the calibration (libs/compliance calibrationExclusion).
 * One transaction, serialized per product spec (advisory lock): the calibration is a fold over the
 * product's comparisons and two batches of one product must not fold at once.
 */
@Injectable()
export class OutcomeService {
  private readonly inputs: RecomputeInputsRepository;
  private readonly deviations: DeviationRepository;

  constructor(
    @Inject(PRISMA) private readonly prisma: PrismaClient,
    private readonly events: LiveEventsPublisher,
    private readonly metrics: WorkerMetrics,
  ) {
    this.inputs = new RecomputeInputsRepository(prisma);
    this.deviations = new DeviationRepository(prisma);
  }

  async review(batchId: string): Promise<OutcomeResult> {
    const result = await this.prisma.$transaction(
      async (tx) => {
        const head = await tx.batch.findUnique({ where: { id: batchId }, select: { specVersion: { select: { specId: true } } } });
        if (!head) throw new BatchNotFoundError(batchId);
        const productSpecId = head.specVersion.specId;
        await tx.$executeRaw`SELECT pg_advisory_xact_lock(hashtextextended(${`ausline:calibration:${productSpecId}`}, 0))`;
        const [{ now }] = await tx.$queryRaw<{ now: Date }[]>`SELECT clock_timestamp() AS now`;

        const batch = await tx.batch.findUniqueOrThrow({ where: { id: batchId }, include: { specVersion: true, loadEvents: true, labResults: { orderBy: [{ postedAt: 'asc' }, { id: 'asc' }] } } });
        const prediction = (await tx.prediction.findFirst({
          where: { batchId },
          orderBy: { version: 'desc' },
          select: { id: true, version: true, phase: true, modelVersion: true, inputDigest: true, result: true },
        })) as LoadedPrediction | null;
        const ctx = driftSpecContext(batch.specVersion);

        const driftValuesChanged = await this.storeDriftValues(tx, batch, prediction, ctx, now);
        const { comparisons, changes, recalibrated } = await this.compareLabResults(tx, batch, productSpecId, prediction, now);
        const recalibratedOpenBatchIds = recalibrated ? await this.openBatches(tx, productSpecId) : [];

        const inputs = {
          predictionId: prediction?.id ?? null,
          predictionVersion: prediction?.version ?? null,
          predictionDigest: prediction?.inputDigest ?? null,
          labResultIds: batch.labResults.map((l) => l.id).sort(),
          outOfBathAt: batch.loadEvents.find((e) => e.kind === 'OUT_OF_BATH')?.at.toISOString() ?? null,
        };
        await tx.batchOutcome.upsert({
          where: { batchId },
          create: { batchId, inputs, evaluatedAt: now },
          update: { inputs, evaluatedAt: now },
        });
        return { batchId, productSpecId, lineId: batch.lineId, driftValuesChanged, comparisons, changes, recalibratedOpenBatchIds };
      },
      { timeout: 60_000, maxWait: 10_000 },
    );
    for (const c of result.changes) this.metrics.deviationChangesTotal.inc({ kind: c.kind });
    const at = new Date().toISOString();
    await this.events.publish(
      result.changes.map((c): LiveEvent => ({ type: 'deviation.changed', deviationId: c.deviationId, batchId: c.batchId, lineId: c.lineId, rule: c.rule, status: c.status, at })),
    );
    return result;
  }

  // ------------------------------------------------------------------------------------- drift values

  private async storeDriftValues(
    tx: Tx,
    batch: { id: string; lineId: string; createdAt: Date; specVersion: { specId: string }; loadEvents: { kind: keyof typeof EVENT_FIELD; at: Date; equipmentId: string }[]; labResults: { id: string; kind: LabResultLike['kind']; scale: string | null; values: unknown }[] },
    prediction: LoadedPrediction | null,
    ctx: DriftSpecContext,
    now: Date,
  ): Promise<boolean> {
    const events: Partial<Record<(typeof EVENT_FIELD)[keyof typeof EVENT_FIELD], number>> = {};
    for (const e of batch.loadEvents) events[EVENT_FIELD[e.kind]] = e.at.getTime();
    const outOfBath = events.outOfBathMs !== undefined;
    const orderAt = new Date(events.intoBathMs ?? events.chargedMs ?? batch.createdAt.getTime());

    const values = new Map<DriftMetric, { value: number; unit: string; source: Record<string, unknown> }>();
    // Predicted metrics only from a final prediction of a load that left the bath: a projection while the load
    // is still in would chart a value that is about to change.
    if (prediction && outOfBath && prediction.phase === 'DONE') {
      for (const [metric, v] of Object.entries(predictedDriftValues(prediction.result, ctx)) as [DriftMetric, { value: number; detail: Record<string, unknown> }][]) {
        values.set(metric, { value: v.value, unit: driftMetricUnit(metric, ctx), source: { predictionId: prediction.id, predictionVersion: prediction.version, modelVersion: prediction.modelVersion, ...v.detail } });
      }
    }
    const measured = measuredHardnessDriftValue(batch.labResults, ctx);
    if (measured) values.set('measured-hardness', { value: measured.value, unit: driftMetricUnit('measured-hardness', ctx), source: measured.detail });
    const intoBath = batch.loadEvents.find((e) => e.kind === 'INTO_BATH');
    if (outOfBath && intoBath && ctx.processWindow) {
      const loaded = await this.inputs.load(batch.id, { leadMs: ctx.processWindow.maxChannelGapS * 1000 }, tx);
      const bathChannels = await tx.channel.findMany({ where: { equipmentId: intoBath.equipmentId, role: 'BATH_TC', quantity: 'TEMPERATURE_C' }, select: { id: true } });
      if (loaded) {
        const record = processRecord({ batchId: batch.id, window: ctx.processWindow, events, channels: loaded.channels, bathChannelIds: bathChannels.map((c) => c.id), nowMs: now.getTime() });
        const t = record.bath.tempC;
        if (t && t.coverage >= MIN_BATH_COVERAGE) {
          values.set('bath-mean-temp-hold', { value: t.meanC, unit: '°C', source: { readings: t.readings, channels: t.channels, coverage: t.coverage, minC: t.minC, maxC: t.maxC, holdMin: record.bath.holdMin } });
        }
      }
    }

    const existing = await tx.driftValue.findMany({ where: { batchId: batch.id } });
    let changed = false;
    for (const row of existing) {
      if (!values.has(row.metric as DriftMetric)) {
        await tx.driftValue.delete({ where: { id: row.id } });
        changed = true;
      }
    }
    for (const [metric, v] of values) {
      const row = existing.find((r) => r.metric === metric);
      const same = row && row.value === v.value && row.unit === v.unit && row.orderAt.getTime() === orderAt.getTime() && canonicalJson(row.source) === canonicalJson(v.source);
      if (same) continue;
      changed = true;
      // updatedAt from the database clock, like DriftChart.evaluatedAt, which the drift sweep compares it with.
      const data = { value: v.value, unit: v.unit, orderAt, source: v.source as Prisma.InputJsonValue, productSpecId: batch.specVersion.specId, lineId: batch.lineId, updatedAt: now };
      await tx.driftValue.upsert({ where: { batchId_metric: { batchId: batch.id, metric } }, create: { batchId: batch.id, metric, ...data }, update: data });
    }
    return changed;
  }

  // -------------------------------------------------------------------------------- lab comparisons

  private async compareLabResults(
    tx: Tx,
    batch: { id: string; lineId: string; labResults: { id: string; kind: LabResultLike['kind']; scale: string | null; values: unknown }[] },
    productSpecId: string,
    prediction: LoadedPrediction | null,
    now: Date,
  ): Promise<{ comparisons: number; changes: DeviationChange[]; recalibrated: boolean }> {
    const quantities = new Set<CalibratedQuantity>();
    let comparisons = 0;
    for (const lab of batch.labResults) {
      for (const obs of labObservations(lab)) {
        comparisons++;
        quantities.add(obs.quantity);
        const raw = prediction ? rawPredictedBand(prediction.result, obs.quantity) : null;
        const fields = {
          measured: obs.comparable ? obs.measured : null,
          measuredDetail: (obs.comparable ? obs.detail : { ...obs.detail, reason: obs.reason }) as Prisma.InputJsonValue,
          predictionId: raw ? prediction!.id : null,
          predictionVersion: raw ? prediction!.version : null,
          rawP05: raw?.band.p05 ?? null,
          rawP50: raw?.band.p50 ?? null,
          rawP95: raw?.band.p95 ?? null,
        };
        const existing = await tx.labComparison.findUnique({ where: { labResultId_quantity: { labResultId: lab.id, quantity: obs.quantity } } });
        if (!existing) {
          await tx.labComparison.create({
            data: { labResultId: lab.id, batchId: batch.id, productSpecId, quantity: obs.quantity, ...fields, verdict: !obs.comparable ? 'not-comparable' : raw ? 'inside' : 'no-prediction', firstComparedAt: now },
          });
        } else if (
          existing.measured !== fields.measured ||
          existing.predictionId !== fields.predictionId ||
          existing.predictionVersion !== fields.predictionVersion ||
          existing.rawP05 !== fields.rawP05 ||
          existing.rawP50 !== fields.rawP50 ||
          existing.rawP95 !== fields.rawP95 ||
          canonicalJson(existing.measuredDetail) !== canonicalJson(fields.measuredDetail)
        ) {
          await tx.labComparison.update({ where: { id: existing.id }, data: fields });
        }
      }
    }
    const touched = new Set<string>([batch.id]);
    let recalibrated = false;
    for (const q of CALIBRATED_QUANTITIES) {
      if (!quantities.has(q)) continue;
      const judged = await this.rejudge(tx, productSpecId, q);
      for (const id of judged.changedBatches) touched.add(id);
      recalibrated ||= judged.inForceChanged;
    }
    const changes: DeviationChange[] = [];
    for (const id of [...touched].sort()) changes.push(...(await this.syncMismatches(tx, id, productSpecId)));
    return { comparisons, changes, recalibrated };
  }

  /** The product's loads in the bath now (INTO_BATH, no OUT_OF_BATH): their verdicts and hold advice are live. */
  private async openBatches(tx: Tx, productSpecId: string): Promise<string[]> {
    const rows = await tx.batch.findMany({
      where: { specVersion: { specId: productSpecId }, loadEvents: { some: { kind: 'INTO_BATH' }, none: { kind: 'OUT_OF_BATH' } } },
      select: { id: true },
      orderBy: { id: 'asc' },
    });
    return rows.map((r) => r.id);
  }

  /**
   * Re-judges every comparison of one product and quantity in calibration order and stores the running
   * calibration; returns the batches whose judgement changed, and whether the calibration that corrects bands
   * (in force) changed: it came into force, left it, or its state moved while in force.
   */
  private async rejudge(tx: Tx, productSpecId: string, quantity: CalibratedQuantity): Promise<{ changedBatches: Set<string>; inForceChanged: boolean }> {
    const rows = await tx.labComparison.findMany({ where: { productSpecId, quantity }, include: { labResult: { select: { measuredAt: true, postedAt: true } } } });
    const timeOf = (r: (typeof rows)[number]) => (r.labResult.measuredAt ?? r.labResult.postedAt).getTime();
    rows.sort((a, b) => a.firstComparedAt.getTime() - b.firstComparedAt.getTime() || timeOf(a) - timeOf(b) || (a.labResultId < b.labResultId ? -1 : a.labResultId > b.labResultId ? 1 : 0));
    const exclusions = await this.exclusionsOf(tx, [...new Set(rows.map((r) => r.batchId))]);
    const { judgements, final } = judgeSequence(
      rows.map((r) => ({
        key: r.id,
        measured: r.measured ?? Number.NaN,
        raw: r.measured !== null && r.rawP05 !== null && r.rawP50 !== null && r.rawP95 !== null ? { p05: r.rawP05, p50: r.rawP50, p95: r.rawP95 } : null,
        excludedBy: exclusions.get(r.batchId) ?? null,
      })),
      { quantity },
    );
    const changedBatches = new Set<string>();
    for (let i = 0; i < rows.length; i++) {
      const row = rows[i];
      const j = judgements[i];
      const verdict = row.measured === null ? 'not-comparable' : j.comparison ? j.comparison.verdict : 'no-prediction';
      const band = j.judgedWith?.band ?? null;
      const next = {
        bandP05: band?.p05 ?? null,
        bandP50: band?.p50 ?? null,
        bandP95: band?.p95 ?? null,
        calibrationApplied: j.judgedWith?.applied ?? false,
        calibrationBefore: (j.judgedWith?.calibration ?? null) as Prisma.InputJsonValue | null,
        calibrationAfter: (j.comparison ? j.after : null) as Prisma.InputJsonValue | null,
        residual: j.residual,
        verdict,
        excludedBy: j.excludedBy as Prisma.InputJsonValue | null,
      };
      const same =
        row.bandP05 === next.bandP05 &&
        row.bandP50 === next.bandP50 &&
        row.bandP95 === next.bandP95 &&
        row.calibrationApplied === next.calibrationApplied &&
        canonicalJson(row.calibrationBefore) === canonicalJson(next.calibrationBefore) &&
        canonicalJson(row.calibrationAfter) === canonicalJson(next.calibrationAfter) &&
        row.residual === next.residual &&
        row.verdict === next.verdict &&
        canonicalJson(row.excludedBy) === canonicalJson(next.excludedBy);
      if (same) continue;
      changedBatches.add(row.batchId);
      await tx.labComparison.update({
        where: { id: row.id },
        data: { ...next, calibrationBefore: next.calibrationBefore ?? Prisma.DbNull, calibrationAfter: next.calibrationAfter ?? Prisma.DbNull, excludedBy: next.excludedBy ?? Prisma.DbNull },
      });
    }
    let inForceChanged = false;
    if (final) {
      const s = summarizeCalibration(final);
      const excluded = summarizeExclusions(judgements.map((j) => j.excludedBy));
      const data = {
        method: CALIBRATION_METHOD,
        n: s.n,
        bias: s.bias,
        sd: s.sd,
        dof: s.dof,
        kappa: s.kappa,
        inForce: s.n >= DEFAULT_MIN_RESULTS,
        state: final as unknown as Prisma.InputJsonValue,
        excludedResults: excluded.results,
        exclusions: excluded as unknown as Prisma.InputJsonValue,
      };
      const before = await tx.productCalibration.findUnique({ where: { productSpecId_quantity: { productSpecId, quantity } }, select: { inForce: true, state: true } });
      const inForceBefore = before?.inForce ? canonicalJson(before.state) : null;
      const inForceAfter = data.inForce ? canonicalJson(final) : null;
      inForceChanged = inForceBefore !== inForceAfter;
      await tx.productCalibration.upsert({ where: { productSpecId_quantity: { productSpecId, quantity } }, create: { productSpecId, quantity, ...data }, update: data });
    }
    return { changedBatches, inForceChanged };
  }

  /** Per batch, why its lab results are left out of the calibration (only batches with an assignable cause). */
  private async exclusionsOf(tx: Tx, batchIds: string[]): Promise<Map<string, CalibrationExclusion>> {
    const deviations = await tx.deviation.findMany({
      where: { batchId: { in: batchIds }, rule: { in: [...PROCESS_WINDOW_RULES] }, severity: { in: [...ASSIGNABLE_CAUSE_SEVERITIES] }, conditionPresent: true },
      select: { id: true, batchId: true, rule: true, severity: true, conditionPresent: true },
    });
    const byBatch = new Map<string, typeof deviations>();
    for (const d of deviations) byBatch.set(d.batchId!, [...(byBatch.get(d.batchId!) ?? []), d]);
    const out = new Map<string, CalibrationExclusion>();
    for (const [batchId, ds] of byBatch) {
      const exclusion = calibrationExclusion(ds);
      if (exclusion) out.set(batchId, exclusion);
    }
    return out;
  }

  /** The mismatch deviations of one batch, from its comparisons (opened, refreshed, cleared by the repository). */
  private async syncMismatches(tx: Tx, batchId: string, productSpecId: string): Promise<DeviationChange[]> {
    const batch = await tx.batch.findUniqueOrThrow({ where: { id: batchId }, select: { lineId: true } });
    const rows = await tx.labComparison.findMany({ where: { batchId, verdict: { in: ['above', 'below'] } }, include: { labResult: { select: { kind: true, externalRef: true } } }, orderBy: { id: 'asc' } });
    const findings = rows.map((r) =>
      mismatchFinding({
        batchId,
        labResultId: r.labResultId,
        labKind: r.labResult.kind,
        externalRef: r.labResult.externalRef,
        quantity: r.quantity as CalibratedQuantity,
        measured: r.measured!,
        measuredDetail: r.measuredDetail as Record<string, unknown>,
        verdict: r.verdict as 'above' | 'below',
        rawBand: { p05: r.rawP05!, p50: r.rawP50!, p95: r.rawP95! },
        band: { p05: r.bandP05!, p50: r.bandP50!, p95: r.bandP95! },
        calibrationApplied: r.calibrationApplied,
        calibration: r.calibrationApplied ? (r.calibrationBefore as never) : null,
        predictionId: r.predictionId!,
        predictionVersion: r.predictionVersion!,
      }),
    );
    return this.deviations.syncFindings({ batchId, lineId: batch.lineId, productSpecId }, findings, { rules: [MISMATCH_RULE] }, tx);
  }
}
