// One value per batch for each drift metric (practice.md §4.1: chart one value per load as individuals),
// taken from the batch's latest prediction, its lab results and its bath log, with the spec limit each is
// judged against (a control-chart signal is not a spec breach; the limit only shows how many lots of
// warning the charts gave).
//
//   bainite-ceiling-margin   predicted T0′ ceiling (bands.ceilingFraction p50) − the spec's minimum bainite
//                            fraction (0 when the spec has none); below 0 the ceiling itself forbids the
//                            required bainite. Fraction. Lower limit 0.
//   blocky-austenite-margin  the spec's maximum blocky austenite − predicted blocky austenite (p50); charted
//                            only when the spec sets a maximum. Fraction. Lower limit 0.
//   predicted-hardness-p50   predicted hardness p50 in the spec's scale (HV when the spec has no hardness band;
//                            HRC/HBW by the E140 rows). Limits: the spec's band.
//   measured-hardness        mean of the batch's hardness readings in the spec's scale (every reading converted
//                            by E140 first). Limits: the spec's band.
//   bath-mean-temp-hold      time-weighted mean bath temperature INTO_BATH → OUT_OF_BATH (process-record.ts).
//                            °C. Limits: the process window's bath band.

import type { AcceptanceCriteria, ProcessWindow } from '@ausline/contracts';
import { predictionBand } from '../calibration/bands.js';
import { convertHardness, meanHardnessIn, type HardnessScaleName, type LabResultLike } from '../calibration/lab.js';
import type { DriftMetric } from '../drift/config.js';

export interface DriftSpecContext {
  acceptance: AcceptanceCriteria | null;
  processWindow: ProcessWindow | null;
}

export function hardnessScaleOf(ctx: DriftSpecContext): HardnessScaleName {
  return ctx.acceptance?.hardness?.scale ?? 'HV';
}

export function driftMetricUnit(metric: DriftMetric, ctx: DriftSpecContext): string {
  switch (metric) {
    case 'bainite-ceiling-margin':
    case 'blocky-austenite-margin':
      return 'volume fraction';
    case 'predicted-hardness-p50':
    case 'measured-hardness':
      return hardnessScaleOf(ctx);
    case 'bath-mean-temp-hold':
      return '°C';
  }
}

/** Whether the spec gives the metric something to be judged by (blocky margin needs the spec's maximum). */
export function driftMetricApplies(metric: DriftMetric, ctx: DriftSpecContext): boolean {
  if (metric === 'blocky-austenite-margin') return ctx.acceptance?.maxBlockyAusteniteFraction !== undefined;
  return true;
}

export function driftSpecLimits(metric: DriftMetric, ctx: DriftSpecContext): { lower: number | null; upper: number | null } | null {
  switch (metric) {
    case 'bainite-ceiling-margin':
      return { lower: 0, upper: null };
    case 'blocky-austenite-margin':
      return ctx.acceptance?.maxBlockyAusteniteFraction !== undefined ? { lower: 0, upper: null } : null;
    case 'predicted-hardness-p50':
    case 'measured-hardness': {
      const h = ctx.acceptance?.hardness;
      return h ? { lower: h.min, upper: h.max } : null;
    }
    case 'bath-mean-temp-hold': {
      const b = ctx.processWindow?.bath;
      return b ? { lower: b.minTempC, upper: b.maxTempC } : null;
    }
  }
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

export interface MetricValue {
  value: number;
  detail: Record<string, unknown>;
}

/** The prediction-based metrics of one batch (those the result carries the numbers for). */
export function predictedDriftValues(result: unknown, ctx: DriftSpecContext): Partial<Record<DriftMetric, MetricValue>> {
  const out: Partial<Record<DriftMetric, MetricValue>> = {};
  const ceilingBand = predictionBand(result, 'ceilingFraction');
  const bainite = isRecord(result) && isRecord(result.bainite) ? result.bainite : null;
  const ceiling = ceilingBand?.p50 ?? (bainite && typeof bainite.ceilingFraction === 'number' ? bainite.ceilingFraction : null);
  if (ceiling !== null && Number.isFinite(ceiling)) {
    const min = ctx.acceptance?.minBainiteFraction ?? 0;
    out['bainite-ceiling-margin'] = { value: ceiling - min, detail: { ceilingFractionP50: ceiling, minBainiteFraction: ctx.acceptance?.minBainiteFraction ?? null, from: ceilingBand ? 'bands.ceilingFraction.p50' : 'bainite.ceilingFraction' } };
  }
  const maxBlocky = ctx.acceptance?.maxBlockyAusteniteFraction;
  const blocky = predictionBand(result, 'blockyAustenite');
  if (maxBlocky !== undefined && blocky) {
    out['blocky-austenite-margin'] = { value: maxBlocky - blocky.p50, detail: { blockyAusteniteP50: blocky.p50, maxBlockyAusteniteFraction: maxBlocky } };
  }
  const hv = predictionBand(result, 'hardnessHV');
  if (hv) {
    const scale = hardnessScaleOf(ctx);
    const value = convertHardness(hv.p50, 'HV', scale);
    if (value !== null) out['predicted-hardness-p50'] = { value, detail: { hardnessHVP50: hv.p50, scale, ...(scale === 'HV' ? {} : { convertedBy: 'ASTM E140 rows' }) } };
  }
  return out;
}

/** Mean hardness of a batch in the spec's scale over all its hardness results (weighted by readings). */
export function measuredHardnessDriftValue(results: readonly LabResultLike[], ctx: DriftSpecContext): MetricValue | null {
  const scale = hardnessScaleOf(ctx);
  let sum = 0;
  let n = 0;
  const used: string[] = [];
  const skipped: string[] = [];
  for (const r of results) {
    if (r.kind !== 'HARDNESS') continue;
    const m = meanHardnessIn(r, scale);
    if (!m) {
      skipped.push(r.id);
      continue;
    }
    sum += m.value * m.n;
    n += m.n;
    used.push(r.id);
  }
  if (n === 0) return null;
  return { value: sum / n, detail: { scale, readings: n, labResultIds: used, ...(skipped.length ? { notConvertible: skipped } : {}) } };
}
