import { PREDICTION_CRITERIA, type CriterionVerdict, type PredictionCriterion } from '@ausline/contracts';
import type { DeviationSeverity } from '../deviations/deviation-state.js';
import type { FindingDetails } from '../process-window/types.js';

/**
 * Verdicts → deviation findings. Every at-risk or nonconforming verdict is one finding (dedupKey batch + rule, so a
 * recompute refreshes it and a verdict that turns conforming clears it through the usual lifecycle).
 *
 * Severity (our classification; predictions are advisory, practice.md §2.6, so none is CRITICAL):
 *   nonconforming → MAJOR, at-risk → MINOR; `hold-too-short-predicted` → MAJOR (it asks for action before the load
 *   leaves the bath).
 * Details carry the numbers rounded to what a person reads, so that the small changes of a live projection do not
 * rewrite the deviation (and its audit trail) at every recompute.
 */

export interface PredictedFinding {
  rule: string;
  severity: DeviationSeverity;
  dedupKey: string;
  channelId: null;
  message: string;
  details: FindingDetails;
}

export interface FindingContext {
  batchId: string;
  modelVersion: string;
  /** Judged history ends in a projection (load still in the bath). */
  projected: boolean;
  bathTempC: number;
}

const DIGITS_BY_UNIT: Record<string, number> = { fraction: 2, ratio: 2, '°C': 0, s: -1, min: 0, 'wt%': 2, MPa: 0, HV: 0, HRC: 1, HBW: 0 };

function roundFor(unit: string | undefined, x: number | null | undefined): number | null {
  if (x === null || x === undefined || !Number.isFinite(x)) return null;
  const digits = DIGITS_BY_UNIT[unit ?? ''] ?? 2;
  if (digits === -1) return Math.round(x / 60) * 60; // seconds: to the minute
  const k = 10 ** digits;
  return Math.round(x * k) / k;
}

export function predictionDedupKey(batchId: string, rule: string): string {
  return `${batchId}:${rule}`;
}

export function verdictFindings(verdicts: readonly CriterionVerdict[], ctx: FindingContext): PredictedFinding[] {
  const out: PredictedFinding[] = [];
  for (const v of verdicts) {
    if (v.verdict === 'conforming') continue;
    const rule = v.rule ?? PREDICTION_CRITERIA[v.criterion as PredictionCriterion];
    if (!rule) continue;
    const severity: DeviationSeverity = rule === 'hold-too-short-predicted' || v.verdict === 'nonconforming' ? 'MAJOR' : 'MINOR';
    out.push({
      rule,
      severity,
      dedupKey: predictionDedupKey(ctx.batchId, rule),
      channelId: null,
      message: `Predicted ${v.verdict === 'nonconforming' ? 'nonconformance' : 'risk'}: ${v.message}. Why: ${(v.drivers ?? []).slice(0, 3).join('; ') || 'see the prediction'}`,
      details: {
        criterion: v.criterion,
        verdict: v.verdict,
        p05: roundFor(v.unit, v.p05),
        p50: roundFor(v.unit, v.p50),
        p95: roundFor(v.unit, v.p95),
        limit: roundFor(v.unit, v.limit),
        limitMin: roundFor(v.unit, v.limitMin),
        limitMax: roundFor(v.unit, v.limitMax),
        unit: v.unit ?? null,
        drivers: [...(v.drivers ?? [])],
        projected: ctx.projected,
        bathTempC: Math.round(ctx.bathTempC),
        modelVersion: ctx.modelVersion,
      },
    });
  }
  return out;
}
