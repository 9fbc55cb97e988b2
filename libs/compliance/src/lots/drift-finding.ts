// A drift episode as a deviation finding (rule 'drift'): the one line a metallurgist reads, and the chart
// data that shows why (the onset evidence). Text and details stay fixed while the episode runs, so a
// chart that keeps signalling does not rewrite the deviation at every lot; they change only when the
// episode ends, takes on another chart's signal, or a lot finally breaks a spec limit.

import type { DeviationSeverity } from '../deviations/deviation-state.js';
import type { DriftMetric } from '../drift/config.js';
import type { DriftEvaluation } from '../drift/monitor.js';
import { driftDedupKey, type DriftEpisode } from './drift-chart.js';

export const DRIFT_RULE = 'drift';

export const DRIFT_METRIC_LABEL: Readonly<Record<DriftMetric, string>> = {
  'bainite-ceiling-margin': 'margin of the predicted bainite ceiling over the minimum bainite fraction',
  'blocky-austenite-margin': 'margin of predicted blocky austenite below its maximum',
  'predicted-hardness-p50': 'predicted hardness (p50)',
  'measured-hardness': 'measured hardness',
  'bath-mean-temp-hold': 'mean bath temperature during hold',
};

export interface DriftFinding {
  rule: typeof DRIFT_RULE;
  severity: DeviationSeverity;
  dedupKey: string;
  channelId: null;
  message: string;
  details: Record<string, unknown>;
  /** The onset lot's batch: the deviation is filed under it. */
  batchId: string;
}

export interface DriftFindingContext {
  productSpecId: string;
  lineId: string;
  specCode: string;
  lineCode: string;
  metric: DriftMetric;
  unit: string;
  limitsVersion: number;
  evaluation: DriftEvaluation;
}

export function driftFinding(episode: DriftEpisode, ctx: DriftFindingContext): DriftFinding {
  const onset = episode.onsetSignals[0];
  const directional = episode.onsetSignals.some((s) => s.direction !== 'none');
  const way = episode.direction === 'up' ? 'drifting up' : episode.direction === 'down' ? 'drifting down' : episode.direction === 'none' ? 'non-random pattern' : 'drifting';
  const breach = ctx.evaluation.firstSpecBreach;
  const breachBefore = breach !== null && breach.index <= episode.startIndex;
  const breachAfter = breach !== null && breach.index > episode.startIndex ? breach : null;
  const message =
    `Drift on ${ctx.specCode} / line ${ctx.lineCode}: ${DRIFT_METRIC_LABEL[ctx.metric]} (${ctx.unit}) ${way} from lot ${episode.startLotId} – ` +
    `${onset.message}; ${breachBefore ? `a lot had already broken a spec limit (lot ${breach!.lotId})` : 'no lot beyond a spec limit at the signal'}`;
  return {
    rule: DRIFT_RULE,
    severity: directional ? 'MAJOR' : 'MINOR',
    dedupKey: driftDedupKey(ctx.productSpecId, ctx.lineId, ctx.metric, ctx.limitsVersion, episode.startBatchId),
    channelId: null,
    batchId: episode.startBatchId,
    message,
    details: {
      kind: 'drift-signal',
      metric: ctx.metric,
      unit: ctx.unit,
      productSpecId: ctx.productSpecId,
      lineId: ctx.lineId,
      limitsVersion: ctx.limitsVersion,
      onsetLotId: episode.startLotId,
      onsetBatchId: episode.startBatchId,
      direction: episode.direction,
      signalKeys: episode.keys,
      episode: { ongoing: episode.ongoing, endLotId: episode.endLotId },
      specLimitBrokenBeforeSignal: breachBefore,
      firstSpecBreachAfterSignal: breachAfter ? { lotId: breachAfter.lotId, value: breachAfter.value, side: breachAfter.side, limit: breachAfter.limit, lotsOfWarning: breachAfter.index - episode.startIndex } : null,
      evidence: episode.evidence,
    },
  };
}
