// How a product's lots on one line become a drift chart: which limits judge them (frozen Phase I estimates
// or specified values, versioned), the chart over the Phase II lots, and the signal episodes that become
// drift deviations. Used by the worker's drift job and by GET /v1/drift, so both show the same chart.
//
// Phase I / Phase II (practice.md §4.1). Without specified limits a metric collects its first `phaseILots`
// lots (default 25), estimates centre and σ̂ = MR̄/d₂ from them (optionally removing out-of-limit lots once,
// listed in the basis), freezes them as version 1 and judges every other lot against them. Frozen means
// frozen: later lots never move the limits; only specified limits in the spec (a new or changed
// `metrics.<m>.limits`) or going back from specified to estimated makes a new version. Every signal and
// every deviation names the limits version it was judged by.
//
// Episodes. A chart that signals keeps signalling while the shift lasts (EWMA and CUSUM carry memory), so a
// deviation per signalling lot would bury the one event under copies. An episode starts at a lot with a
// deviation-worthy signal (adverse direction, or a pattern without direction such as stratification) and
// ends once `episodeGapLots` lots in a row (default 5) show none; one drift deviation per episode, keyed by
// its onset lot. Signals in the good direction (a margin growing) are charted but raise nothing.

import type { DriftChartsSettings } from '@ausline/contracts';
import { DRIFT_METRICS, resolveDriftChartConfig, type AdverseDirection, type DriftChartConfig, type DriftChartConfigOverrides, type DriftMetric } from '../drift/config.js';
import { DriftInputError, estimatePhaseILimits, specifiedLimits, type FrozenLimits, type SigmaMethod } from '../drift/individuals.js';
import { driftSignalEvidence, evaluateDrift, type DriftEvaluation, type DriftEvidence, type DriftSignal } from '../drift/monitor.js';

export const DEFAULT_PHASE_I_LOTS = 25;
export const DEFAULT_TRIM_ROUNDS = 1;
export const DEFAULT_EPISODE_GAP_LOTS = 5;

export interface ResolvedMetricSettings {
  enabled: boolean;
  config: DriftChartConfig;
  overrides: DriftChartConfigOverrides;
  specified: { centre: number; sigma: number } | null;
  adverseDirection: AdverseDirection | undefined;
}

export interface ResolvedDriftSettings {
  phaseILots: number;
  sigmaMethod: SigmaMethod;
  trimRounds: number;
  episodeGapLots: number;
  metrics: Record<DriftMetric, ResolvedMetricSettings>;
}

function mergeOverrides(a: DriftChartConfigOverrides | undefined, b: DriftChartConfigOverrides | undefined): DriftChartConfigOverrides {
  return {
    ewma: { ...a?.ewma, ...b?.ewma },
    cusum: { ...a?.cusum, ...b?.cusum },
    movingRange: { ...a?.movingRange, ...b?.movingRange },
    runRules: { ...a?.runRules, ...b?.runRules },
  };
}

/** Defaults merged with a spec version's driftCharts (already validated by the contract; null = all defaults). */
export function resolveDriftSettings(settings: DriftChartsSettings | null | undefined): ResolvedDriftSettings {
  const s = settings ?? {};
  const metrics = {} as Record<DriftMetric, ResolvedMetricSettings>;
  for (const metric of DRIFT_METRICS) {
    const m = s.metrics?.[metric];
    const overrides = mergeOverrides(s.charts as DriftChartConfigOverrides | undefined, m?.charts as DriftChartConfigOverrides | undefined);
    metrics[metric] = {
      enabled: m?.enabled ?? true,
      config: resolveDriftChartConfig(overrides, `metrics.${metric}.charts`),
      overrides,
      specified: m?.limits ?? null,
      adverseDirection: m?.adverseDirection,
    };
  }
  return {
    phaseILots: s.phaseILots ?? DEFAULT_PHASE_I_LOTS,
    sigmaMethod: s.sigmaMethod ?? 'average-moving-range',
    trimRounds: s.trimRounds ?? DEFAULT_TRIM_ROUNDS,
    episodeGapLots: s.episodeGapLots ?? DEFAULT_EPISODE_GAP_LOTS,
    metrics,
  };
}

/** A lot as charted: lotId is the batch code (unique, readable), batchId the row it came from. */
export interface ChartLot {
  lotId: string;
  batchId: string;
  value: number;
}

export interface StoredLimits {
  version: number;
  source: 'phase-i' | 'specified';
  limits: FrozenLimits;
}

export type LimitsDecision =
  | { kind: 'keep' }
  | { kind: 'new'; source: 'phase-i' | 'specified'; limits: FrozenLimits; reason: string }
  | { kind: 'collecting'; have: number; need: number }
  | { kind: 'failed'; reason: string };

/**
 * Whether the current limits stand, new ones are due (specified in the spec, or Phase I now possible), or
 * the metric is still collecting its Phase I lots. `lots` in production order.
 */
export function decideLimits(current: StoredLimits | null, lots: readonly ChartLot[], metric: ResolvedMetricSettings, settings: ResolvedDriftSettings): LimitsDecision {
  const nextVersion = (current?.version ?? 0) + 1;
  if (metric.specified) {
    const { centre, sigma } = metric.specified;
    if (current && current.source === 'specified' && current.limits.centre === centre && current.limits.sigma === sigma) return { kind: 'keep' };
    return {
      kind: 'new',
      source: 'specified',
      limits: specifiedLimits(centre, sigma, nextVersion),
      reason: current ? `specified limits in the spec changed (v${current.version} → v${nextVersion})` : 'limits specified in the spec',
    };
  }
  if (current && current.source === 'phase-i') return { kind: 'keep' };
  const need = settings.phaseILots;
  if (lots.length < need) return { kind: 'collecting', have: lots.length, need };
  const basis = lots.slice(0, need);
  try {
    const limits = estimatePhaseILimits(
      basis.map((l) => ({ lotId: l.lotId, value: l.value })),
      { version: nextVersion, sigmaMethod: settings.sigmaMethod, trimRounds: settings.trimRounds, minLots: Math.max(10, Math.floor(0.8 * need)) },
    );
    return {
      kind: 'new',
      source: 'phase-i',
      limits,
      reason: current ? `limits no longer specified in the spec; Phase I estimated from the first ${need} lots` : `Phase I estimated from the first ${need} lots`,
    };
  } catch (error) {
    if (error instanceof DriftInputError) return { kind: 'failed', reason: `Phase I from the first ${need} lots: ${error.message}` };
    throw error;
  }
}

export interface DriftEpisode {
  /** Index (in the Phase II points) of the onset and of the last signalling lot. */
  startIndex: number;
  lastSignalIndex: number;
  startLotId: string;
  startBatchId: string;
  /** False once `episodeGapLots` lots in a row have shown no deviation-worthy signal. */
  ongoing: boolean;
  endLotId: string | null;
  /** Deviation-worthy signals at the onset lot. */
  onsetSignals: DriftSignal[];
  /** Every signal key seen during the episode. */
  keys: string[];
  direction: 'up' | 'down' | 'none' | 'mixed';
  /** The onset evidence: the chart points that show why (libs/compliance driftSignalEvidence). */
  evidence: DriftEvidence;
}

/** Signals that make a deviation: a drift the adverse way, or a pattern with no direction. */
export function raisesDeviation(signal: DriftSignal): boolean {
  return signal.adverse || signal.direction === 'none';
}

export function driftEpisodes(evaluation: DriftEvaluation, lots: readonly ChartLot[], episodeGapLots: number): DriftEpisode[] {
  const byIndex = new Map<number, DriftSignal[]>();
  for (const s of evaluation.signals) {
    if (!raisesDeviation(s)) continue;
    const list = byIndex.get(s.index) ?? [];
    list.push(s);
    byIndex.set(s.index, list);
  }
  const episodes: DriftEpisode[] = [];
  let open: DriftEpisode | null = null;
  const n = evaluation.points.length;
  for (let i = 0; i < n; i++) {
    const here = byIndex.get(i);
    if (here && here.length > 0) {
      if (!open) {
        const onset = here;
        const dirs = new Set(onset.map((s) => s.direction));
        open = {
          startIndex: i,
          lastSignalIndex: i,
          startLotId: lots[i].lotId,
          startBatchId: lots[i].batchId,
          ongoing: true,
          endLotId: null,
          onsetSignals: onset,
          keys: [],
          direction: dirs.size === 1 ? ([...dirs][0] as 'up' | 'down' | 'none') : 'mixed',
          evidence: driftSignalEvidence(evaluation, onset[0]),
        };
        episodes.push(open);
      }
      open.lastSignalIndex = i;
      for (const s of here) if (!open.keys.includes(s.key)) open.keys.push(s.key);
    } else if (open && i - open.lastSignalIndex >= episodeGapLots) {
      open.ongoing = false;
      open.endLotId = lots[open.lastSignalIndex].lotId;
      open = null;
    }
  }
  return episodes;
}

export interface DriftChartInput {
  product: string;
  line: string;
  metric: DriftMetric;
  /** Every lot with a value, in production order. */
  lots: readonly ChartLot[];
  limits: StoredLimits;
  settings: ResolvedDriftSettings;
  specLimits: { lower: number | null; upper: number | null } | null;
}

export interface DriftChartResult {
  /** Lots the limits were estimated from (empty for specified limits), in order. */
  phaseI: ChartLot[];
  /** Lots judged against the limits, in order; evaluation.points[i] belongs to phaseII[i]. */
  phaseII: ChartLot[];
  evaluation: DriftEvaluation;
  episodes: DriftEpisode[];
}

/** The chart of one metric: Phase II lots judged against the frozen limits, and the signal episodes. */
export function chartDrift(input: DriftChartInput): DriftChartResult {
  const basis = new Set(input.limits.limits.basis?.lotIds ?? []);
  const excluded = new Set((input.limits.limits.basis?.excluded ?? []).map((e) => e.lotId));
  const phaseI = input.lots.filter((l) => basis.has(l.lotId) || excluded.has(l.lotId));
  const phaseII = input.lots.filter((l) => !basis.has(l.lotId) && !excluded.has(l.lotId));
  const m = input.settings.metrics[input.metric];
  const evaluation = evaluateDrift({
    product: input.product,
    line: input.line,
    metric: input.metric,
    limits: input.limits.limits,
    config: m.overrides,
    specLimits: input.specLimits,
    ...(m.adverseDirection ? { adverseDirection: m.adverseDirection } : {}),
    lots: phaseII.map((l) => ({ lotId: l.lotId, value: l.value })),
  });
  return { phaseI, phaseII, evaluation, episodes: driftEpisodes(evaluation, phaseII, input.settings.episodeGapLots) };
}

/** dedupKey of the drift deviation of one episode. */
export function driftDedupKey(productSpecId: string, lineId: string, metric: DriftMetric, limitsVersion: number, onsetBatchId: string): string {
  return `drift:${productSpecId}:${lineId}:${metric}:v${limitsVersion}:${onsetBatchId}`;
}

/** dedupKey prefix of every drift deviation judged by one limits version of one chart. */
export function driftDedupPrefix(productSpecId: string, lineId: string, metric: DriftMetric, limitsVersion: number): string {
  return `drift:${productSpecId}:${lineId}:${metric}:v${limitsVersion}:`;
}
