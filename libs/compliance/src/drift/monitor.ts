// DriftMonitor: EWMA, tabular CUSUM, individuals/MR and run rules on one metric of one product and line,
// judged against versioned frozen Phase I limits (practice.md §4).
//
// Two forms with identical results:
//   * batch       evaluateDrift(input)                       → the whole chart and every signal
//   * incremental startDriftMonitor(input), stepDriftMonitor(state, lot) → new state, point, signals
// The state is plain JSON (a worker can store it between lots); folding stepDriftMonitor over a series
// gives exactly the points and signals of evaluateDrift (tested).
//
// A control-chart signal means the PROCESS CHANGED, not that a batch is nonconforming (practice.md §4.1:
// keep the two alarm classes apart). Spec limits, when given, are only used to report the first lot that
// actually breaks one, so that a drift deviation can show how many lots of warning the charts gave.

import { DRIFT_METRICS, DEFAULT_ADVERSE_DIRECTION, resolveDriftChartConfig, type AdverseDirection, type DriftChartConfig, type DriftChartConfigOverrides, type DriftMetric } from './config.js';
import { cusumChart, cusumInitialState, cusumUpdate, type CusumPoint, type CusumState } from './cusum.js';
import { ewmaChart, ewmaUpdate, type EwmaPoint } from './ewma.js';
import { DriftInputError, assertLotSeries, individualsChart, individualsPoint, type FrozenLimits, type IndividualsPoint } from './individuals.js';
import { RUN_RULE_DESCRIPTIONS, RUN_RULE_MAX_WINDOW, evaluateRunRules, runRuleHitsAtNewest, selectedRuleIds, type RunRuleId } from './run-rules.js';
import type { LotValue, SignalDirection } from './types.js';

export interface SpecLimits {
  lower: number | null;
  upper: number | null;
}

export interface DriftMonitorInput {
  product: string;
  line: string;
  metric: DriftMetric;
  limits: FrozenLimits;
  /** Per-spec chart parameters; anything left out takes the documented default (config.ts). */
  config?: DriftChartConfigOverrides | null;
  /** Spec (acceptance) limits of the metric, to report the first real breach; optional. */
  specLimits?: { lower?: number | null; upper?: number | null } | null;
  /** Overrides DEFAULT_ADVERSE_DIRECTION[metric]. */
  adverseDirection?: AdverseDirection;
}

export interface DriftEvaluationInput extends DriftMonitorInput {
  /** Lots in production order. */
  lots: readonly LotValue[];
}

export interface DriftPoint {
  index: number;
  lotId: string;
  value: number;
  /** (value − centre)/σ. */
  standardized: number;
  individuals: { centre: number; ucl: number; lcl: number; movingRange: number | null; movingRangeUcl: number | null };
  /** EWMA statistic and limits in the metric's unit; null when the EWMA is disabled. */
  ewma: { statistic: number; centre: number; ucl: number; lcl: number } | null;
  /** CUSUM sums in σ units, with the decision interval h; null when the CUSUM is disabled. */
  cusum: { upper: number; lower: number; h: number; upperRun: number; lowerRun: number } | null;
  specBreach: 'above' | 'below' | null;
  /** Keys of the signals raised at this point (see DriftSignal.key). */
  signalKeys: string[];
}

export type DriftSignalSource = 'ewma' | 'cusum' | 'run-rule' | 'moving-range';

export interface DriftSignal {
  /** Identifies a signal episode: source/rule and direction, e.g. 'ewma:up', 'cusum:down', 'WE2:up', 'N7:none'. */
  key: string;
  source: DriftSignalSource;
  rule: 'ewma' | 'cusum-upper' | 'cusum-lower' | 'moving-range' | RunRuleId;
  ruleSet: 'ewma' | 'tabular-cusum' | 'i-mr' | 'western-electric' | 'nelson';
  description: string;
  /** Human-readable sentence with the numbers, for a deviation's text. */
  message: string;
  direction: SignalDirection;
  /** The drift points the way that is bad for this metric (never true for a pattern without direction). */
  adverse: boolean;
  /** First point of an episode: the same key did not signal at the previous point. */
  onset: boolean;
  index: number;
  lotId: string;
  /**
   * Points behind the signal, oldest first: a run rule's pattern; the lots a CUSUM sum has accumulated
   * over (its run N, capped at the evidence window); the lots carrying 95% of the EWMA weight. Capped at
   * the evidence window (see evidenceWindowLength) so that the incremental state stays bounded.
   */
  pointIndices: number[];
  lotIds: string[];
  /** Charted statistic and the limit it crossed; unit in statisticUnit (null for patterns without one). */
  statistic: number | null;
  limit: number | null;
  statisticUnit: 'metric' | 'sigma';
  /** Estimated current process mean (CUSUM: μ₀ ± σ(k + C/N); EWMA: the statistic); null for run rules. */
  estimatedMean: number | null;
  limitsVersion: number;
}

export interface SpecBreach {
  index: number;
  lotId: string;
  value: number;
  side: 'above' | 'below';
  limit: number;
}

export interface DriftEvaluation {
  schema: 'ausline.drift-evaluation/v1';
  product: string;
  line: string;
  metric: DriftMetric;
  adverseDirection: AdverseDirection;
  limits: FrozenLimits;
  config: DriftChartConfig;
  specLimits: SpecLimits | null;
  points: DriftPoint[];
  signals: DriftSignal[];
  firstSignal: DriftSignal | null;
  firstAdverseSignal: DriftSignal | null;
  firstSpecBreach: SpecBreach | null;
  /** firstSpecBreach.index − firstSignal.index: lots of warning the charts gave (null unless both exist). */
  leadLotsBeforeSpecBreach: number | null;
}

export interface DriftMonitorState {
  schema: 'ausline.drift-state/v1';
  product: string;
  line: string;
  metric: DriftMetric;
  adverseDirection: AdverseDirection;
  limits: FrozenLimits;
  config: DriftChartConfig;
  specLimits: SpecLimits | null;
  /** Number of lots seen (the next lot gets this index). */
  count: number;
  /** Index of the first lot after the last (re)start. */
  startIndex: number;
  ewma: { statistic: number; updates: number } | null;
  cusum: CusumState | null;
  /** The most recent lots (up to evidenceWindowLength), oldest first. */
  recent: { index: number; lotId: string; value: number }[];
  /** Signal keys raised at the previous lot, for onset marking. */
  activeKeys: string[];
  firstSignal: DriftSignal | null;
  firstAdverseSignal: DriftSignal | null;
  firstSpecBreach: SpecBreach | null;
}

export interface DriftStepResult {
  state: DriftMonitorState;
  point: DriftPoint;
  signals: DriftSignal[];
}

const EVIDENCE_WINDOW_CAP = 100;

/** Lots that carry 95% of the EWMA weight: smallest n with (1 − λ)ⁿ ≤ 0.05. */
function ewmaWeightWindow(lambda: number): number {
  if (lambda >= 1) return 1;
  return Math.ceil(Math.log(0.05) / Math.log(1 - lambda));
}

/** How many recent lots the monitor keeps: enough for every run rule and for the EWMA evidence window. */
export function evidenceWindowLength(config: DriftChartConfig): number {
  const ewma = config.ewma.enabled ? ewmaWeightWindow(config.ewma.lambda) : 1;
  return Math.min(EVIDENCE_WINDOW_CAP, Math.max(RUN_RULE_MAX_WINDOW, ewma));
}

// ------------------------------------------------------------------------------------------ validation

interface Context {
  product: string;
  line: string;
  metric: DriftMetric;
  adverseDirection: AdverseDirection;
  limits: FrozenLimits;
  config: DriftChartConfig;
  specLimits: SpecLimits | null;
  ruleIds: RunRuleId[];
  window: number;
  /** First lot index after the last (re)start: evidence never reaches back past it. */
  startIndex: number;
}

function assertLimits(limits: FrozenLimits): void {
  if (limits === null || typeof limits !== 'object') throw new DriftInputError('limits', 'must be a FrozenLimits object');
  if (!Number.isInteger(limits.version) || limits.version < 1) throw new DriftInputError('limits.version', 'must be a positive integer');
  if (typeof limits.centre !== 'number' || !Number.isFinite(limits.centre)) throw new DriftInputError('limits.centre', 'must be a finite number');
  if (typeof limits.sigma !== 'number' || !Number.isFinite(limits.sigma) || limits.sigma <= 0) throw new DriftInputError('limits.sigma', 'must be a positive finite number');
  const ind = limits.individuals;
  if (!ind || !Number.isFinite(ind.ucl) || !Number.isFinite(ind.lcl) || !(ind.ucl > ind.lcl)) throw new DriftInputError('limits.individuals', 'must have finite ucl > lcl');
}

function prepare(input: DriftMonitorInput): Context {
  if (input === null || typeof input !== 'object') throw new DriftInputError('(root)', 'must be an object');
  if (typeof input.product !== 'string' || input.product.length === 0) throw new DriftInputError('product', 'must be a non-empty string');
  if (typeof input.line !== 'string' || input.line.length === 0) throw new DriftInputError('line', 'must be a non-empty string');
  if (!DRIFT_METRICS.includes(input.metric)) throw new DriftInputError('metric', `must be one of ${DRIFT_METRICS.join(', ')}`);
  assertLimits(input.limits);
  const adverseDirection = input.adverseDirection ?? DEFAULT_ADVERSE_DIRECTION[input.metric];
  if (!['up', 'down', 'both'].includes(adverseDirection)) throw new DriftInputError('adverseDirection', "must be 'up', 'down' or 'both'");
  let specLimits: SpecLimits | null = null;
  if (input.specLimits) {
    const lower = input.specLimits.lower ?? null;
    const upper = input.specLimits.upper ?? null;
    if (lower !== null && !Number.isFinite(lower)) throw new DriftInputError('specLimits.lower', 'must be a finite number or null');
    if (upper !== null && !Number.isFinite(upper)) throw new DriftInputError('specLimits.upper', 'must be a finite number or null');
    if (lower !== null && upper !== null && !(upper > lower)) throw new DriftInputError('specLimits.upper', 'must exceed specLimits.lower');
    if (lower !== null || upper !== null) specLimits = { lower, upper };
  }
  const config = resolveDriftChartConfig(input.config, 'config');
  return {
    product: input.product,
    line: input.line,
    metric: input.metric,
    adverseDirection,
    limits: input.limits,
    config,
    specLimits,
    ruleIds: selectedRuleIds(config.runRules),
    window: evidenceWindowLength(config),
    startIndex: 0,
  };
}

function contextOfState(state: DriftMonitorState): Context {
  return {
    product: state.product,
    line: state.line,
    metric: state.metric,
    adverseDirection: state.adverseDirection,
    limits: state.limits,
    config: state.config,
    specLimits: state.specLimits,
    ruleIds: selectedRuleIds(state.config.runRules),
    window: evidenceWindowLength(state.config),
    startIndex: state.startIndex,
  };
}

// ------------------------------------------------------------------------------ point and signal assembly

interface PointParts {
  index: number;
  lotId: string;
  value: number;
  individuals: IndividualsPoint;
  ewma: EwmaPoint | null;
  cusum: CusumPoint | null;
  runRuleHits: { rule: RunRuleId; direction: SignalDirection; windowLength: number }[];
}

const fmt = (x: number) => (Math.abs(x) >= 100 ? x.toFixed(1) : Math.abs(x) >= 1 ? x.toFixed(3) : x.toPrecision(4));

function isAdverse(direction: SignalDirection, adverse: AdverseDirection): boolean {
  if (direction === 'none') return false;
  return adverse === 'both' || adverse === direction;
}

function assemble(ctx: Context, parts: PointParts, lotIdAt: (index: number) => string, previousKeys: readonly string[]): { point: DriftPoint; signals: DriftSignal[] } {
  const { index, lotId, value } = parts;
  const { limits, config } = ctx;
  const window = ctx.window;
  const range = (count: number) => {
    const n = Math.max(1, Math.min(count, window, index - ctx.startIndex + 1));
    const pointIndices = Array.from({ length: n }, (_, j) => index - n + 1 + j);
    return { pointIndices, lotIds: pointIndices.map(lotIdAt) };
  };
  const signals: DriftSignal[] = [];
  const push = (s: Omit<DriftSignal, 'onset' | 'adverse' | 'index' | 'lotId' | 'limitsVersion' | 'key'> & { keyBase: string }) => {
    const { keyBase, ...rest } = s;
    const key = `${keyBase}:${s.direction}`;
    signals.push({
      key,
      ...rest,
      adverse: isAdverse(s.direction, ctx.adverseDirection),
      onset: !previousKeys.includes(key),
      index,
      lotId,
      limitsVersion: limits.version,
    });
  };

  if (parts.ewma && parts.ewma.signal) {
    const e = parts.ewma;
    const up = e.signal === 'up';
    push({
      keyBase: 'ewma',
      source: 'ewma',
      rule: 'ewma',
      ruleSet: 'ewma',
      description: `EWMA beyond its ${config.ewma.limits} ${config.ewma.L}σ_z limit`,
      message: `EWMA (λ=${config.ewma.lambda}, L=${config.ewma.L}) at lot ${lotId} is ${fmt(e.statistic)}, ${up ? 'above the upper' : 'below the lower'} limit ${fmt(up ? e.ucl : e.lcl)} (centre ${fmt(e.centre)}, limits v${limits.version})`,
      direction: up ? 'up' : 'down',
      ...range(ewmaWeightWindow(config.ewma.lambda)),
      statistic: e.statistic,
      limit: up ? e.ucl : e.lcl,
      statisticUnit: 'metric',
      estimatedMean: e.statistic,
    });
  }
  if (parts.cusum && parts.cusum.signal) {
    const c = parts.cusum;
    const sides: ('up' | 'down')[] = c.signal === 'both' ? ['up', 'down'] : [c.signal === 'up' ? 'up' : 'down'];
    for (const side of sides) {
      const sum = side === 'up' ? c.upper : c.lower;
      const run = side === 'up' ? c.upperRun : c.lowerRun;
      const mean = side === 'up' ? c.estimatedMeanUp : c.estimatedMeanDown;
      push({
        keyBase: 'cusum',
        source: 'cusum',
        rule: side === 'up' ? 'cusum-upper' : 'cusum-lower',
        ruleSet: 'tabular-cusum',
        description: `${side === 'up' ? 'upper' : 'lower'} CUSUM beyond the decision interval h`,
        message: `${side === 'up' ? 'Upper' : 'Lower'} CUSUM (k=${config.cusum.k}σ, h=${config.cusum.h}σ) at lot ${lotId} is ${fmt(sum)}σ > h after ${run} lots; estimated mean ${fmt(mean!)} against centre ${fmt(limits.centre)} (limits v${limits.version})`,
        direction: side,
        ...range(run),
        statistic: sum,
        limit: c.h,
        statisticUnit: 'sigma',
        estimatedMean: mean,
      });
    }
  }
  const zoneOf: Record<string, number | null> = { WE1: 3, N1: 3, WE2: 2, N5: 2, WE3: 1, N6: 1, WE4: 0, N2: 0, N3: null, N4: null, N7: 1, N8: 1 };
  for (const hit of parts.runRuleHits) {
    push({
      keyBase: hit.rule,
      source: 'run-rule',
      rule: hit.rule,
      ruleSet: hit.rule.startsWith('WE') ? 'western-electric' : 'nelson',
      description: RUN_RULE_DESCRIPTIONS[hit.rule],
      message: `${hit.rule.startsWith('WE') ? 'Western Electric' : 'Nelson'} rule ${hit.rule.replace(/^(WE|N)/, '')} (${RUN_RULE_DESCRIPTIONS[hit.rule]}) at lot ${lotId}, value ${fmt(value)} = ${fmt((value - limits.centre) / limits.sigma)}σ from centre ${fmt(limits.centre)} (limits v${limits.version})`,
      direction: hit.direction,
      ...range(hit.windowLength),
      statistic: (value - limits.centre) / limits.sigma,
      limit: zoneOf[hit.rule],
      statisticUnit: 'sigma',
      estimatedMean: null,
    });
  }
  const ind = parts.individuals;
  if (config.movingRange.enabled && ind.movingRangeBeyondLimit) {
    push({
      keyBase: 'moving-range',
      source: 'moving-range',
      rule: 'moving-range',
      ruleSet: 'i-mr',
      description: 'moving range beyond D₄·MR̄',
      message: `Moving range ${fmt(ind.movingRange!)} between lots ${lotIdAt(index - 1)} and ${lotId} exceeds ${fmt(ind.movingRangeUcl!)} (limits v${limits.version})`,
      direction: 'up',
      ...range(2),
      statistic: ind.movingRange,
      limit: ind.movingRangeUcl,
      statisticUnit: 'metric',
      estimatedMean: null,
    });
  }

  const spec = ctx.specLimits;
  const specBreach: DriftPoint['specBreach'] =
    spec && spec.upper !== null && value > spec.upper ? 'above' : spec && spec.lower !== null && value < spec.lower ? 'below' : null;
  const point: DriftPoint = {
    index,
    lotId,
    value,
    standardized: (value - limits.centre) / limits.sigma,
    individuals: { centre: ind.centre, ucl: ind.ucl, lcl: ind.lcl, movingRange: ind.movingRange, movingRangeUcl: ind.movingRangeUcl },
    ewma: parts.ewma ? { statistic: parts.ewma.statistic, centre: parts.ewma.centre, ucl: parts.ewma.ucl, lcl: parts.ewma.lcl } : null,
    cusum: parts.cusum ? { upper: parts.cusum.upper, lower: parts.cusum.lower, h: parts.cusum.h, upperRun: parts.cusum.upperRun, lowerRun: parts.cusum.lowerRun } : null,
    specBreach,
    signalKeys: signals.map((s) => s.key),
  };
  return { point, signals };
}

function specBreachOf(ctx: Context, point: DriftPoint): SpecBreach | null {
  if (!point.specBreach || !ctx.specLimits) return null;
  return {
    index: point.index,
    lotId: point.lotId,
    value: point.value,
    side: point.specBreach,
    limit: point.specBreach === 'above' ? ctx.specLimits.upper! : ctx.specLimits.lower!,
  };
}

// ------------------------------------------------------------------------------------------ batch form

/** Chart a whole series of lots against frozen limits: every point's chart data and every signal. */
export function evaluateDrift(input: DriftEvaluationInput): DriftEvaluation {
  const ctx = prepare(input);
  assertLotSeries(input.lots);
  const lots = input.lots;
  const values = lots.map((l) => l.value);
  const basis = { centre: ctx.limits.centre, sigma: ctx.limits.sigma };
  const individuals = individualsChart(values, ctx.limits);
  const ewma = ctx.config.ewma.enabled ? ewmaChart(values, basis, ctx.config.ewma) : null;
  const cusum = ctx.config.cusum.enabled ? cusumChart(values, basis, ctx.config.cusum) : null;
  const hitsByIndex = new Map<number, PointParts['runRuleHits']>();
  if (ctx.ruleIds.length > 0) {
    for (const s of evaluateRunRules(values, basis.centre, basis.sigma, ctx.config.runRules)) {
      const list = hitsByIndex.get(s.index) ?? [];
      list.push({ rule: s.rule, direction: s.direction, windowLength: s.pointIndices.length });
      hitsByIndex.set(s.index, list);
    }
  }

  const points: DriftPoint[] = [];
  const signals: DriftSignal[] = [];
  let previousKeys: string[] = [];
  let firstSpecBreach: SpecBreach | null = null;
  for (let i = 0; i < lots.length; i++) {
    const { point, signals: here } = assemble(
      ctx,
      { index: i, lotId: lots[i].lotId, value: values[i], individuals: individuals[i], ewma: ewma ? ewma[i] : null, cusum: cusum ? cusum[i] : null, runRuleHits: hitsByIndex.get(i) ?? [] },
      (j) => lots[j].lotId,
      previousKeys,
    );
    points.push(point);
    signals.push(...here);
    previousKeys = point.signalKeys;
    firstSpecBreach ??= specBreachOf(ctx, point);
  }
  const firstSignal = signals[0] ?? null;
  return {
    schema: 'ausline.drift-evaluation/v1',
    product: ctx.product,
    line: ctx.line,
    metric: ctx.metric,
    adverseDirection: ctx.adverseDirection,
    limits: ctx.limits,
    config: ctx.config,
    specLimits: ctx.specLimits,
    points,
    signals,
    firstSignal,
    firstAdverseSignal: signals.find((s) => s.adverse) ?? null,
    firstSpecBreach,
    leadLotsBeforeSpecBreach: firstSignal && firstSpecBreach ? firstSpecBreach.index - firstSignal.index : null,
  };
}

// ------------------------------------------------------------------------------------ incremental form

/** A fresh monitor (no lots yet) for one metric of one product and line. */
export function startDriftMonitor(input: DriftMonitorInput): DriftMonitorState {
  const ctx = prepare(input);
  return {
    schema: 'ausline.drift-state/v1',
    product: ctx.product,
    line: ctx.line,
    metric: ctx.metric,
    adverseDirection: ctx.adverseDirection,
    limits: ctx.limits,
    config: ctx.config,
    specLimits: ctx.specLimits,
    count: 0,
    startIndex: 0,
    ewma: ctx.config.ewma.enabled ? { statistic: ctx.limits.centre, updates: 0 } : null,
    cusum: ctx.config.cusum.enabled ? cusumInitialState(ctx.config.cusum) : null,
    recent: [],
    activeKeys: [],
    firstSignal: null,
    firstAdverseSignal: null,
    firstSpecBreach: null,
  };
}

/**
 * Feed the next lot. Pure: returns a new state; the old one is untouched. A lot id still in the kept
 * window is refused; beyond that window the caller (the worker, keyed by lot id) owns idempotency.
 */
export function stepDriftMonitor(state: DriftMonitorState, lot: LotValue): DriftStepResult {
  if (state === null || typeof state !== 'object' || state.schema !== 'ausline.drift-state/v1') throw new DriftInputError('state', "must be a state from startDriftMonitor (schema 'ausline.drift-state/v1')");
  assertLotSeries([lot], 'lot');
  if (state.recent.some((r) => r.lotId === lot.lotId)) throw new DriftInputError('lot.lotId', `lot '${lot.lotId}' was already charted`);
  const ctx = contextOfState(state);
  const basis = { centre: ctx.limits.centre, sigma: ctx.limits.sigma };
  const index = state.count;
  const previous = state.recent.length > 0 && state.recent[state.recent.length - 1].index === index - 1 ? state.recent[state.recent.length - 1].value : null;
  const ewma = state.ewma ? ewmaUpdate(state.ewma.statistic, lot.value, state.ewma.updates + 1, basis, ctx.config.ewma) : null;
  const cusum = state.cusum ? cusumUpdate(state.cusum, lot.value, basis, ctx.config.cusum) : null;
  const recentZ = [...state.recent.slice(-(RUN_RULE_MAX_WINDOW - 1)).map((r) => (r.value - basis.centre) / basis.sigma), (lot.value - basis.centre) / basis.sigma];
  const runRuleHits = runRuleHitsAtNewest(recentZ, ctx.ruleIds).map((h) => ({ rule: h.rule, direction: h.direction, windowLength: h.windowLength }));
  const recent = [...state.recent, { index, lotId: lot.lotId, value: lot.value }].slice(-ctx.window);
  const lotIdAt = (j: number) => {
    const r = recent.find((x) => x.index === j);
    if (!r) throw new Error(`internal: lot index ${j} is outside the kept window`);
    return r.lotId;
  };
  const { point, signals } = assemble(
    ctx,
    { index, lotId: lot.lotId, value: lot.value, individuals: individualsPoint(lot.value, previous, ctx.limits), ewma, cusum, runRuleHits },
    lotIdAt,
    state.activeKeys,
  );
  const next: DriftMonitorState = {
    ...state,
    count: index + 1,
    ewma: ewma ? { statistic: ewma.statistic, updates: state.ewma!.updates + 1 } : null,
    cusum: cusum ? { upper: cusum.upper, lower: cusum.lower, upperRun: cusum.upperRun, lowerRun: cusum.lowerRun } : null,
    recent,
    activeKeys: point.signalKeys,
    firstSignal: state.firstSignal ?? signals[0] ?? null,
    firstAdverseSignal: state.firstAdverseSignal ?? signals.find((s) => s.adverse) ?? null,
    firstSpecBreach: state.firstSpecBreach ?? specBreachOf(ctx, point),
  };
  return { state: next, point, signals };
}

/**
 * Restart the charts after an investigated signal, maintenance or a bath change (practice.md §4.4): the
 * EWMA returns to the centre, the CUSUM to its head start (`fastInitialResponse` forces h/2, Lucas &
 * Crosier 1982), the run-rule history is cleared, and new frozen limits may be swapped in. Lot numbering
 * continues; the "first signal" records start afresh.
 */
export function restartDriftMonitor(state: DriftMonitorState, options: { limits?: FrozenLimits; fastInitialResponse?: boolean } = {}): DriftMonitorState {
  const limits = options.limits ?? state.limits;
  assertLimits(limits);
  const config: DriftChartConfig = options.fastInitialResponse ? { ...state.config, cusum: { ...state.config.cusum, headStart: state.config.cusum.h / 2 } } : state.config;
  return {
    ...state,
    limits,
    config,
    startIndex: state.count,
    ewma: config.ewma.enabled ? { statistic: limits.centre, updates: 0 } : null,
    cusum: config.cusum.enabled ? cusumInitialState(config.cusum) : null,
    recent: [],
    activeKeys: [],
    firstSignal: null,
    firstAdverseSignal: null,
    firstSpecBreach: null,
  };
}

// ------------------------------------------------------------------------------------------- evidence

export interface DriftEvidence {
  schema: 'ausline.drift-evidence/v1';
  product: string;
  line: string;
  metric: DriftMetric;
  limits: FrozenLimits;
  config: DriftChartConfig;
  signal: DriftSignal;
  /** Chart points from a little before the signal's pattern up to the signalling lot. */
  points: DriftPoint[];
  firstSpecBreach: SpecBreach | null;
}

/** The slice of an evaluation a drift deviation carries to show why the chart signalled. */
export function driftSignalEvidence(evaluation: DriftEvaluation, signal: DriftSignal, lotsBefore = 10): DriftEvidence {
  const from = Math.max(0, (signal.pointIndices[0] ?? signal.index) - lotsBefore);
  return {
    schema: 'ausline.drift-evidence/v1',
    product: evaluation.product,
    line: evaluation.line,
    metric: evaluation.metric,
    limits: evaluation.limits,
    config: evaluation.config,
    signal,
    points: evaluation.points.slice(from, signal.index + 1),
    firstSpecBreach: evaluation.firstSpecBreach && evaluation.firstSpecBreach.index <= signal.index ? evaluation.firstSpecBreach : null,
  };
}
