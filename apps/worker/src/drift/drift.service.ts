import { Inject, Injectable } from '@nestjs/common';
import type { LiveEvent } from '@ausline/contracts';
import {
  DRIFT_METRICS,
  DRIFT_RULE,
  chartDrift,
  decideLimits,
  driftDedupPrefix,
  driftFinding,
  driftMetricApplies,
  driftMetricUnit,
  driftSettingsOf,
  driftSpecContext,
  driftSpecLimits,
  type DriftFinding,
  type DriftMetric,
  type FrozenLimits,
  type StoredLimits,
} from '@ausline/compliance';
import { DeviationRepository, chartLots, type DeviationChange, type Prisma, type PrismaClient } from '@ausline/db';
import { LiveEventsPublisher } from '../events/live-events.js';
import { WorkerLogger } from '../logger.js';
import { WorkerMetrics } from '../ops/worker-metrics.js';
import { PRISMA } from '../prisma.js';

type Tx = Prisma.TransactionClient;

export type DriftChartStatus = 'collecting-phase-i' | 'monitoring' | 'phase-i-failed' | 'not-applicable' | 'disabled';

export interface DriftChartOutcome {
  metric: DriftMetric;
  status: DriftChartStatus;
  limitsVersion: number | null;
  lots: number;
  episodes: number;
  newLimits: { version: number; source: 'phase-i' | 'specified'; reason: string } | null;
}

export class DriftTargetNotFoundError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'DriftTargetNotFoundError';
  }
}

/** Limits as stored: libs/compliance FrozenLimits plus the unit the chart was in when they were set. */
type StoredLimitsJson = FrozenLimits & { unit?: string };

/** The FrozenLimits of a stored row, without the unit (evidence must not differ between the run that set the limits and later runs). */
export function frozenOf(json: unknown): FrozenLimits {
  const { unit: _unit, ...limits } = json as StoredLimitsJson;
  return limits;
}

/** The spec version whose drift settings and limits judge the chart: the approved one in force, else the newest. */
async function inForceVersion(tx: Tx, specId: string) {
  return (
    (await tx.productSpecVersion.findFirst({ where: { specId, status: 'APPROVED' }, orderBy: { version: 'desc' } })) ??
    (await tx.productSpecVersion.findFirst({ where: { specId }, orderBy: { version: 'desc' } }))
  );
}

/**
 * Drift across lots for one product spec and line (issue 4, item 4): for every metric, the lots in production
 * order, the frozen limits (estimated once from the first Phase I lots, or specified in the spec; a new
 * version only when the spec's specified limits change), the chart (EWMA, CUSUM, run rules as configured) and
 * one 'drift' deviation per signal episode, filed under the lot that signalled, carrying the chart data that
 * shows why. The whole chart is evaluated from the stored values each time (a few thousand lots take
 * milliseconds), so late or corrected values land in their place; an episode that a correction removes
 * clears its deviation if nobody acted on it yet. Serialized per spec and line (advisory lock).
 */
@Injectable()
export class DriftService {
  private readonly deviations: DeviationRepository;

  constructor(
    @Inject(PRISMA) private readonly prisma: PrismaClient,
    private readonly events: LiveEventsPublisher,
    private readonly metrics: WorkerMetrics,
    private readonly logger: WorkerLogger,
  ) {
    this.deviations = new DeviationRepository(prisma);
  }

  async evaluate(productSpecId: string, lineId: string): Promise<{ charts: DriftChartOutcome[]; changes: DeviationChange[] }> {
    const outcome = await this.prisma.$transaction(
      async (tx) => {
        await tx.$executeRaw`SELECT pg_advisory_xact_lock(hashtextextended(${`ausline:drift:${productSpecId}:${lineId}`}, 0))`;
        const [{ now }] = await tx.$queryRaw<{ now: Date }[]>`SELECT clock_timestamp() AS now`;
        const spec = await tx.productSpec.findUnique({ where: { id: productSpecId }, select: { code: true } });
        if (!spec) throw new DriftTargetNotFoundError(`product spec ${productSpecId} does not exist`);
        const line = await tx.line.findUnique({ where: { id: lineId }, select: { code: true } });
        if (!line) throw new DriftTargetNotFoundError(`line ${lineId} does not exist`);
        const version = await inForceVersion(tx, productSpecId);
        const ctx = driftSpecContext(version);
        const { settings, problem } = driftSettingsOf(version);
        if (problem) this.logger.event('warn', { msg: 'drift settings fall back to defaults', productSpecId, problem });

        const charts: DriftChartOutcome[] = [];
        const changes: DeviationChange[] = [];
        for (const metric of DRIFT_METRICS) {
          const m = settings.metrics[metric];
          const unit = driftMetricUnit(metric, ctx);
          const base = { productSpecId, lineId, metric };
          const save = (status: DriftChartStatus, limitsVersion: number | null, lotCount: number, summary: Record<string, unknown>) =>
            tx.driftChart.upsert({
              where: { productSpecId_lineId_metric: base },
              create: { ...base, status, limitsVersion, lotCount, summary: { unit, ...summary, ...(problem ? { settingsProblem: problem } : {}) } as Prisma.InputJsonValue, evaluatedAt: now },
              update: { status, limitsVersion, lotCount, summary: { unit, ...summary, ...(problem ? { settingsProblem: problem } : {}) } as Prisma.InputJsonValue, evaluatedAt: now },
            });
          if (!m.enabled || !driftMetricApplies(metric, ctx)) {
            const status = m.enabled ? 'not-applicable' : 'disabled';
            await save(status, null, 0, { reason: m.enabled ? 'the spec sets no maximum blocky austenite fraction' : 'disabled in the spec' });
            charts.push({ metric, status, limitsVersion: null, lots: 0, episodes: 0, newLimits: null });
            continue;
          }
          const lots = await chartLots(tx, productSpecId, lineId, metric, unit);
          const latest = await tx.driftLimits.findFirst({ where: base, orderBy: { version: 'desc' } });
          let stored: StoredLimits | null = latest ? { version: latest.version, source: latest.source as StoredLimits['source'], limits: frozenOf(latest.limits) } : null;
          const storedUnit = latest ? ((latest.limits as unknown as StoredLimitsJson).unit ?? unit) : unit;
          // Limits set in another unit (the spec changed its hardness scale) cannot judge this chart: set new ones.
          let decision = decideLimits(storedUnit === unit ? stored : null, lots, m, settings);
          if (decision.kind === 'new' && stored && storedUnit !== unit) {
            decision = { ...decision, limits: { ...decision.limits, version: stored.version + 1 }, reason: `${decision.reason} (the chart's unit changed from ${storedUnit} to ${unit})` };
          }
          let newLimits: DriftChartOutcome['newLimits'] = null;
          if (decision.kind === 'new') {
            const limitsJson: StoredLimitsJson = { ...decision.limits, unit };
            await tx.driftLimits.create({
              data: {
                ...base,
                version: decision.limits.version,
                source: decision.source,
                centre: decision.limits.centre,
                sigma: decision.limits.sigma,
                limits: limitsJson as unknown as Prisma.InputJsonValue,
                specVersionId: version!.id,
                reason: decision.reason,
              },
            });
            stored = { version: decision.limits.version, source: decision.source, limits: decision.limits };
            newLimits = { version: decision.limits.version, source: decision.source, reason: decision.reason };
          } else if (decision.kind === 'collecting') {
            await save('collecting-phase-i', null, lots.length, { phaseI: { have: decision.have, need: decision.need } });
            charts.push({ metric, status: 'collecting-phase-i', limitsVersion: null, lots: lots.length, episodes: 0, newLimits: null });
            continue;
          } else if (decision.kind === 'failed') {
            await save('phase-i-failed', stored?.version ?? null, lots.length, { reason: decision.reason });
            charts.push({ metric, status: 'phase-i-failed', limitsVersion: null, lots: lots.length, episodes: 0, newLimits: null });
            continue;
          }
          const limits = stored!;
          const chart = chartDrift({ product: spec.code, line: line.code, metric, lots, limits, settings, specLimits: driftSpecLimits(metric, ctx) });
          const findings = chart.episodes.map((e) =>
            driftFinding(e, { productSpecId, lineId, specCode: spec.code, lineCode: line.code, metric, unit, limitsVersion: limits.version, evaluation: chart.evaluation }),
          );
          changes.push(...(await this.syncDriftDeviations(tx, productSpecId, lineId, metric, limits.version, findings)));
          const last = chart.evaluation.points.at(-1) ?? null;
          await save('monitoring', limits.version, lots.length, {
            limits: { version: limits.version, source: limits.source, centre: limits.limits.centre, sigma: limits.limits.sigma },
            phaseILots: chart.phaseI.length,
            phaseIILots: chart.phaseII.length,
            episodes: chart.episodes.map((e, i) => ({
              onsetLotId: e.startLotId,
              onsetBatchId: e.startBatchId,
              ongoing: e.ongoing,
              endLotId: e.endLotId,
              direction: e.direction,
              keys: e.keys,
              dedupKey: findings[i].dedupKey,
            })),
            firstSpecBreach: chart.evaluation.firstSpecBreach,
            lastPoint: last ? { lotId: last.lotId, value: last.value, ewma: last.ewma?.statistic ?? null, signalKeys: last.signalKeys } : null,
          });
          charts.push({ metric, status: 'monitoring', limitsVersion: limits.version, lots: lots.length, episodes: chart.episodes.length, newLimits });
        }
        return { charts, changes };
      },
      { timeout: 60_000, maxWait: 10_000 },
    );
    for (const c of outcome.changes) this.metrics.deviationChangesTotal.inc({ kind: c.kind });
    const at = new Date().toISOString();
    await this.events.publish(
      outcome.changes.map((c): LiveEvent => ({ type: 'deviation.changed', deviationId: c.deviationId, batchId: c.batchId, lineId: c.lineId, rule: c.rule, status: c.status, at })),
    );
    return outcome;
  }

  /**
   * Opens or refreshes one drift deviation per episode of the current limits version; one whose episode is
   * gone (values corrected, a lot re-ordered) is cleared if still OPEN, else noted (repository rules). Earlier
   * limits versions' deviations stay as they were: they were judged by other limits.
   */
  private async syncDriftDeviations(tx: Tx, productSpecId: string, lineId: string, metric: DriftMetric, limitsVersion: number, findings: DriftFinding[]): Promise<DeviationChange[]> {
    const prefix = driftDedupPrefix(productSpecId, lineId, metric, limitsVersion);
    const present = await tx.deviation.findMany({ where: { rule: DRIFT_RULE, dedupKey: { startsWith: prefix }, conditionPresent: true }, select: { dedupKey: true, batchId: true } });
    const changes: DeviationChange[] = [];
    for (const f of [...findings].sort((a, b) => (a.dedupKey < b.dedupKey ? -1 : 1))) {
      const c = await this.deviations.openOrRefresh(
        { rule: f.rule, severity: f.severity, dedupKey: f.dedupKey, channelId: null, message: f.message, details: f.details },
        { batchId: f.batchId, lineId, productSpecId },
        tx,
      );
      if (c) changes.push(c);
    }
    const current = new Set(findings.map((f) => f.dedupKey));
    const vanished = present.filter((p) => !current.has(p.dedupKey));
    const vanishedKeys = new Set(vanished.map((v) => v.dedupKey));
    for (const batchId of [...new Set(vanished.map((v) => v.batchId).filter((b): b is string => b !== null))].sort()) {
      // clearIfUnacknowledged works per batch: keep every other present drift deviation of that batch as it is.
      const keep = (await tx.deviation.findMany({ where: { batchId, rule: DRIFT_RULE, conditionPresent: true }, select: { dedupKey: true } }))
        .map((d) => d.dedupKey)
        .filter((k) => !vanishedKeys.has(k));
      changes.push(...(await this.deviations.clearIfUnacknowledged(batchId, keep, { rules: [DRIFT_RULE] }, tx)));
    }
    return changes;
  }
}
