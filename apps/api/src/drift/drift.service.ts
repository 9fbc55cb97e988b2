import { Injectable } from '@nestjs/common';
import type { DriftChartQuery, DriftChartsSettings } from '@ausline/contracts';
import {
  DEFAULT_ADVERSE_DIRECTION,
  DRIFT_METRICS,
  DRIFT_METRIC_LABEL,
  chartDrift,
  driftMetricApplies,
  driftMetricUnit,
  driftSettingsOf,
  driftSpecContext,
  driftSpecLimits,
  type DriftMetric,
  type FrozenLimits,
  type StoredLimits,
} from '@ausline/compliance';
import { Prisma, chartLots, type PrismaClient, type ProductSpecVersion } from '@ausline/db';
import { conflict, notFound } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';

/** The spec version whose drift settings judge the charts: the approved one in force, else the newest. */
async function inForceVersion(prisma: PrismaClient, specId: string): Promise<ProductSpecVersion | null> {
  return (
    (await prisma.productSpecVersion.findFirst({ where: { specId, status: 'APPROVED' }, orderBy: { version: 'desc' } })) ??
    (await prisma.productSpecVersion.findFirst({ where: { specId }, orderBy: { version: 'desc' } }))
  );
}

/**
 * Drift charts for the dashboard. The chart is recomputed here from the stored lot values and the frozen
 * limits the worker set, with the same pure functions the worker's drift job uses, so what is drawn is what
 * raised the deviations. Nothing is written here: limits are set by the worker only.
 */
@Injectable()
export class DriftQueryService {
  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}

  async chart(q: DriftChartQuery) {
    const spec = await this.prisma.productSpec.findUnique({ where: { id: q.specId }, select: { id: true, code: true, name: true } });
    if (!spec) throw notFound(`Product spec ${q.specId} does not exist`);
    const line = await this.prisma.line.findUnique({ where: { id: q.lineId }, select: { id: true, code: true, name: true } });
    if (!line) throw notFound(`Line ${q.lineId} does not exist`);
    const version = await inForceVersion(this.prisma, spec.id);
    const ctx = driftSpecContext(version);
    const { settings, problem } = driftSettingsOf(version);
    const metric = q.metric as DriftMetric;
    const m = settings.metrics[metric];
    const unit = driftMetricUnit(metric, ctx);
    const specLimits = driftSpecLimits(metric, ctx);
    const stored = await this.prisma.driftChart.findUnique({ where: { productSpecId_lineId_metric: { productSpecId: spec.id, lineId: line.id, metric } } });
    const limitsRows = await this.prisma.driftLimits.findMany({ where: { productSpecId: spec.id, lineId: line.id, metric }, orderBy: { version: 'asc' } });
    const head = {
      spec,
      line,
      metric,
      label: DRIFT_METRIC_LABEL[metric],
      unit,
      specVersion: version ? { id: version.id, version: version.version, status: version.status } : null,
      settings: {
        config: m.config,
        adverseDirection: m.adverseDirection ?? DEFAULT_ADVERSE_DIRECTION[metric],
        phaseILots: settings.phaseILots,
        sigmaMethod: settings.sigmaMethod,
        trimRounds: settings.trimRounds,
        episodeGapLots: settings.episodeGapLots,
        specifiedLimits: m.specified,
        ...(problem ? { problem } : {}),
      },
      specLimits,
      limitsHistory: limitsRows.map((l) => ({ version: l.version, source: l.source, centre: l.centre, sigma: l.sigma, reason: l.reason, specVersionId: l.specVersionId, createdAt: l.createdAt })),
      evaluatedAt: stored?.evaluatedAt ?? null,
    };
    const lots = await chartLots(this.prisma, spec.id, line.id, metric, unit);
    if (!m.enabled || !driftMetricApplies(metric, ctx)) {
      return { ...head, status: m.enabled ? 'not-applicable' : 'disabled', lotCount: lots.length, limits: null, phaseI: { lots: [], need: settings.phaseILots }, points: [], signals: [], episodes: [], firstSpecBreach: null };
    }
    const latest = limitsRows.at(-1);
    const latestUnit = latest ? ((latest.limits as { unit?: string }).unit ?? unit) : unit;
    if (!latest || latestUnit !== unit) {
      return {
        ...head,
        status: stored?.status === 'phase-i-failed' ? 'phase-i-failed' : 'collecting-phase-i',
        reason: (stored?.summary as { reason?: string } | undefined)?.reason ?? null,
        lotCount: lots.length,
        limits: null,
        phaseI: { lots: lots.slice(0, settings.phaseILots), need: settings.phaseILots },
        points: [],
        signals: [],
        episodes: [],
        firstSpecBreach: null,
      };
    }
    // The stored JSON carries the chart's unit beside the FrozenLimits; the chart gets the limits alone, as in the worker.
    const { unit: _unit, ...frozen } = latest.limits as unknown as FrozenLimits & { unit?: string };
    const limits: StoredLimits = { version: latest.version, source: latest.source as StoredLimits['source'], limits: frozen };
    const chart = chartDrift({ product: spec.code, line: line.code, metric, lots, limits, settings, specLimits });
    const deviations = await this.prisma.deviation.findMany({
      where: { rule: 'drift', productSpecId: spec.id, lineId: line.id, dedupKey: { startsWith: `drift:${spec.id}:${line.id}:${metric}:` } },
      select: { id: true, dedupKey: true, status: true, severity: true, conditionPresent: true, openedAt: true, batchId: true },
    });
    const from = q.last !== undefined ? Math.max(0, chart.evaluation.points.length - q.last) : 0;
    const batchOf = new Map(chart.phaseII.map((l) => [l.lotId, l.batchId]));
    return {
      ...head,
      status: 'monitoring',
      lotCount: lots.length,
      limits: { ...limits.limits, source: limits.source, createdAt: latest.createdAt, reason: latest.reason },
      phaseI: { lots: chart.phaseI, need: settings.phaseILots },
      pointsFrom: from,
      points: chart.evaluation.points.slice(from).map((p) => ({ ...p, batchId: batchOf.get(p.lotId) ?? null })),
      signals: chart.evaluation.signals,
      episodes: chart.episodes.map((e) => {
        const key = `drift:${spec.id}:${line.id}:${metric}:v${limits.version}:${e.startBatchId}`;
        const d = deviations.find((x) => x.dedupKey === key) ?? null;
        return {
          onsetIndex: e.startIndex,
          onsetLotId: e.startLotId,
          onsetBatchId: e.startBatchId,
          lastSignalIndex: e.lastSignalIndex,
          ongoing: e.ongoing,
          endLotId: e.endLotId,
          direction: e.direction,
          keys: e.keys,
          onsetSignals: e.onsetSignals,
          deviation: d ? { id: d.id, status: d.status, severity: d.severity, openedAt: d.openedAt } : null,
        };
      }),
      firstSpecBreach: chart.evaluation.firstSpecBreach,
      leadLotsBeforeSpecBreach: chart.evaluation.leadLotsBeforeSpecBreach,
    };
  }

  /** Every chart of a product spec (optionally one line) as the worker last evaluated it. */
  async overview(specId: string, lineId: string | undefined) {
    const spec = await this.prisma.productSpec.findUnique({ where: { id: specId }, select: { id: true, code: true } });
    if (!spec) throw notFound(`Product spec ${specId} does not exist`);
    const rows = await this.prisma.driftChart.findMany({
      where: { productSpecId: specId, ...(lineId ? { lineId } : {}) },
      include: { line: { select: { code: true } } },
      orderBy: [{ lineId: 'asc' }, { metric: 'asc' }],
    });
    return {
      spec,
      metrics: DRIFT_METRICS,
      charts: rows.map((r) => ({ lineId: r.lineId, lineCode: r.line.code, metric: r.metric, status: r.status, limitsVersion: r.limitsVersion, lotCount: r.lotCount, summary: r.summary, evaluatedAt: r.evaluatedAt })),
    };
  }

  /** Drift settings of one spec version; only a DRAFT may change (an approved version is the record of what was in force). */
  async setSettings(specId: string, version: number, settings: DriftChartsSettings) {
    return this.prisma.$transaction(async (tx) => {
      const row = await tx.productSpecVersion.findUnique({ where: { specId_version: { specId, version } } });
      if (!row) throw notFound(`Product spec ${specId} has no version ${version}`);
      if (row.status !== 'DRAFT') {
        throw conflict(`Version ${version} is ${row.status}; drift settings can be changed on a DRAFT only (add a new version)`, [{ path: 'params.version', message: `status is ${row.status}` }]);
      }
      const updated = await tx.productSpecVersion.update({ where: { id: row.id }, data: { driftCharts: settings as Prisma.InputJsonValue } });
      return { specId, version, status: updated.status, driftCharts: updated.driftCharts };
    });
  }

  async settingsInForce(specId: string) {
    const spec = await this.prisma.productSpec.findUnique({ where: { id: specId }, select: { id: true, code: true } });
    if (!spec) throw notFound(`Product spec ${specId} does not exist`);
    const version = await inForceVersion(this.prisma, specId);
    const { settings, problem } = driftSettingsOf(version);
    return {
      spec,
      specVersion: version ? { id: version.id, version: version.version, status: version.status } : null,
      stored: version?.driftCharts ?? null,
      resolved: settings,
      ...(problem ? { problem } : {}),
    };
  }
}
