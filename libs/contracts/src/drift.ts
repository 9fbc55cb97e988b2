import { z } from 'zod';

/**
 * Drift across lots (issue 4, item 4): the queues that carry the work, the per-spec chart settings stored
 * with a product spec version (ProductSpecVersion.driftCharts), and the query of GET /v1/drift.
 *
 * The statistics themselves are pure and live in libs/compliance (drift/ for the charts, lots/ for how a
 * product's lots become one chart). This file only describes data that crosses a boundary.
 */

/** The charted metrics, one value per batch (practice.md §4.1: one value per load, as individuals). */
export const DRIFT_METRIC_NAMES = [
  'bainite-ceiling-margin',
  'blocky-austenite-margin',
  'predicted-hardness-p50',
  'measured-hardness',
  'bath-mean-temp-hold',
] as const;
export type DriftMetricName = (typeof DRIFT_METRIC_NAMES)[number];

// ---------------------------------------------------------------------------------------------
// Queues
// ---------------------------------------------------------------------------------------------

/**
 * Per-batch follow-up after every completed recompute: the batch's charted values (from its latest
 * prediction, its lab results and its bath log) and its lab results against the predicted bands.
 */
export const OUTCOME_QUEUE = 'outcome';
/** Per product spec and line: the drift charts over all lots, and the drift deviations. */
export const DRIFT_QUEUE = 'drift';

/** Delay of both queues from the first add: a burst of recomputes of one batch (or of one product's batches) folds into one job. */
export const DRIFT_DEBOUNCE_MS = 500;

export const OutcomeJob = z.strictObject({
  batchId: z.uuid(),
  reason: z.enum(['recompute', 'sweep', 'manual']),
});
export type OutcomeJob = z.infer<typeof OutcomeJob>;

export const DriftJob = z.strictObject({
  productSpecId: z.uuid(),
  lineId: z.uuid(),
  reason: z.enum(['outcome', 'sweep', 'settings', 'manual']),
});
export type DriftJob = z.infer<typeof DriftJob>;

/** BullMQ deduplication ids (used with { id, keepLastIfActive }, like recomputeDedupId; apps/worker/src/drift/enqueue.ts). */
export function outcomeDedupId(batchId: string): string {
  return `outcome:${batchId}`;
}
export function driftDedupId(productSpecId: string, lineId: string): string {
  return `drift:${productSpecId}:${lineId}`;
}

// ---------------------------------------------------------------------------------------------
// Per-spec chart settings (ProductSpecVersion.driftCharts)
// ---------------------------------------------------------------------------------------------

const ChartOverrides = z.strictObject({
  ewma: z
    .strictObject({
      enabled: z.boolean().optional(),
      lambda: z.number().finite().gt(0, 'must be in (0, 1]').max(1, 'must be in (0, 1]').optional(),
      L: z.number().finite().gt(0, 'must be in (0, 10]').max(10, 'must be in (0, 10]').optional(),
      limits: z.enum(['exact', 'asymptotic']).optional(),
    })
    .optional(),
  cusum: z
    .strictObject({
      enabled: z.boolean().optional(),
      k: z.number().finite().min(0, 'must be in [0, 5] (σ units)').max(5, 'must be in [0, 5] (σ units)').optional(),
      h: z.number().finite().gt(0, 'must be in (0, 50] (σ units)').max(50, 'must be in (0, 50] (σ units)').optional(),
      headStart: z.number().finite().min(0, 'must be ≥ 0 (σ units)').optional(),
    })
    .optional(),
  movingRange: z.strictObject({ enabled: z.boolean().optional() }).optional(),
  runRules: z
    .strictObject({
      westernElectric: z.array(z.number().int().min(1).max(4)).optional(),
      nelson: z.array(z.number().int().min(1).max(8)).optional(),
    })
    .optional(),
});
export type DriftChartOverridesInput = z.infer<typeof ChartOverrides>;

const MetricSettings = z.strictObject({
  /** Chart this metric (default true; a metric without data or without the limit it needs stays empty). */
  enabled: z.boolean().optional(),
  /** Overrides of the chart parameters for this metric, on top of `charts`. */
  charts: ChartOverrides.optional(),
  /**
   * Known in-control centre and σ (a prior capability study): used as frozen limits from the first lot,
   * instead of estimating Phase I limits from the first lots.
   */
  limits: z.strictObject({ centre: z.number().finite(), sigma: z.number().finite().positive('must be more than 0') }).optional(),
  /** Which drift direction is adverse (default per metric: margins 'down', the rest 'both'). */
  adverseDirection: z.enum(['up', 'down', 'both']).optional(),
});

export const DriftChartsSettings = z
  .strictObject({
    /** Chart parameters for every metric (defaults: libs/compliance DEFAULT_DRIFT_CHART_CONFIG). */
    charts: ChartOverrides.optional(),
    /** Lots to estimate Phase I limits from (default 25; Montgomery: 20–25 subgroups, more where history allows). */
    phaseILots: z.number().int().min(10, 'at least 10 lots').max(1000, 'at most 1000 lots').optional(),
    /** σ̂ from the average (MR̄/d₂, default) or the median moving range (robust). */
    sigmaMethod: z.enum(['average-moving-range', 'median-moving-range']).optional(),
    /** Rounds of removing out-of-limit lots from Phase I and re-estimating (default 1; the removed lots are listed). */
    trimRounds: z.number().int().min(0).max(5).optional(),
    /** An episode of signals ends after this many lots in a row without a signal (default 5). */
    episodeGapLots: z.number().int().min(1).max(100).optional(),
    metrics: z.partialRecord(z.enum(DRIFT_METRIC_NAMES), MetricSettings).optional(),
  })
  .superRefine((s, ctx) => {
    const check = (o: DriftChartOverridesInput | undefined, path: (string | number)[]) => {
      if (!o) return;
      const h = o.cusum?.h;
      const hs = o.cusum?.headStart;
      if (h !== undefined && hs !== undefined && hs >= h) ctx.addIssue({ code: 'custom', path: [...path, 'cusum', 'headStart'], message: `must be below h (${h})` });
      for (const key of ['westernElectric', 'nelson'] as const) {
        const list = o.runRules?.[key];
        list?.forEach((r, i) => {
          if (list.indexOf(r) !== i) ctx.addIssue({ code: 'custom', path: [...path, 'runRules', key, i], message: `duplicate rule ${r}` });
        });
      }
    };
    check(s.charts, ['charts']);
    for (const [metric, m] of Object.entries(s.metrics ?? {})) check(m?.charts, ['metrics', metric, 'charts']);
  });
export type DriftChartsSettings = z.infer<typeof DriftChartsSettings>;

// ---------------------------------------------------------------------------------------------
// GET /v1/drift
// ---------------------------------------------------------------------------------------------

export const DriftChartQuery = z.strictObject({
  specId: z.uuid('not a UUID'),
  lineId: z.uuid('not a UUID'),
  metric: z.enum(DRIFT_METRIC_NAMES),
  /** Only the most recent N Phase II points (signals and limits are always complete). Default all, max 5000. */
  last: z.coerce.number().int().min(1).max(5000).optional(),
});
export type DriftChartQuery = z.infer<typeof DriftChartQuery>;

/** GET /v1/drift/charts: every chart of a product spec, on one line or all. */
export const DriftOverviewQuery = z.strictObject({ specId: z.uuid('not a UUID'), lineId: z.uuid('not a UUID').optional() });
export type DriftOverviewQuery = z.infer<typeof DriftOverviewQuery>;
