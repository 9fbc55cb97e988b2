// Individuals and moving-range (I-MR) chart, Phase I estimation and frozen Phase II limits.
//
// practice.md §4.1–4.2: temperatures and hardness are charted as ONE value per load (an individuals
// chart), because readings within a load are autocorrelated and 3σ limits on raw readings alarm all the
// time. σ is the WITHIN-process (short-term) σ estimated from the average moving range of span 2,
// σ̂ = MR̄/d₂ (Montgomery, Introduction to Statistical Quality Control, §6.4), not the overall sample
// standard deviation: a drifting Phase I history would otherwise inflate σ and hide the drift.

import type { LotValue } from './types.js';

/** d₂ for moving ranges of span 2 (the table value; exactly 2/√π = 1.12838). */
export const D2_SPAN2 = 1.128;
/** D₄ for span 2: upper limit of the MR chart = D₄·MR̄ (D₃ = 0, so the lower limit is 0). */
export const D4_SPAN2 = 3.267;
/**
 * Median of the moving range of span 2 in σ units: √2·Φ⁻¹(0.75) = 0.9539, used by the robust estimate
 * σ̂ = median(MR)/0.954 (practice.md §4.2 [S57]).
 */
export const MEDIAN_MR_SPAN2 = 0.954;

export type SigmaMethod = 'average-moving-range' | 'median-moving-range';

/** Versioned, frozen Phase I limits for one metric of one product and line. */
export interface FrozenLimits {
  /** Increments each time the limits are re-estimated; every signal carries the version it was judged by. */
  version: number;
  centre: number;
  /** Within-process σ̂ in the metric's unit. */
  sigma: number;
  sigmaMethod: SigmaMethod | 'specified';
  /** Width of the individuals-chart limits in σ (3 by convention). */
  limitWidthSigma: number;
  individuals: { ucl: number; lcl: number };
  /** Moving-range chart (span 2): centre MR̄ and upper limit D₄·MR̄; null when σ was specified, not estimated. */
  movingRange: { centre: number; ucl: number } | null;
  /** What the limits were estimated from; null when they were specified (e.g. from a spec or a prior study). */
  basis: PhaseIBasis | null;
}

export interface PhaseIBasis {
  /** Lots used, in order. */
  lotIds: string[];
  /** Lots removed as out of control during estimation, with the reason. */
  excluded: { lotId: string; reason: 'individuals-limit' | 'moving-range-limit' }[];
  /** Number of moving ranges that entered MR̄ (or the median). */
  movingRangeCount: number;
  /** Overall sample standard deviation of the retained values (for Pp/Ppk, and to compare with σ̂). */
  overallSd: number;
}

export interface PhaseIOptions {
  /** Version number to stamp on the limits (the caller owns the sequence). Default 1. */
  version?: number;
  sigmaMethod?: SigmaMethod;
  /** Individuals-chart limit width in σ. Default 3. */
  limitWidthSigma?: number;
  /**
   * Remove lots beyond the individuals or MR limits and re-estimate, up to this many rounds (default 0:
   * keep every lot). Montgomery's Phase I practice removes points with an ASSIGNABLE cause; automatic
   * removal is only a convenience and the excluded lots are listed so a person can confirm them.
   */
  trimRounds?: number;
  /**
   * Minimum number of retained lots (default 20; Montgomery recommends 20–25 subgroups for Phase I). For
   * individuals that is short: with limits from 25 lots the chance of an in-control false alarm within 50
   * lots is about 26% (EWMA) / 31% (CUSUM) instead of 9% / 12% with known parameters, and with 100 lots
   * 14% / 18% (seeded simulation, bench/drift-arl.ts §3). Use 100+ lots where the history allows.
   */
  minLots?: number;
}

export class DriftInputError extends Error {
  constructor(
    readonly path: string,
    message: string,
  ) {
    super(`${path}: ${message}`);
    this.name = 'DriftInputError';
  }
}

/** Check a lot series: non-empty unique lot ids and finite values. Throws DriftInputError naming the field path. */
export function assertLotSeries(lots: readonly LotValue[], path = 'lots'): void {
  if (!Array.isArray(lots)) throw new DriftInputError(path, 'must be an array of { lotId, value }');
  const seen = new Set<string>();
  lots.forEach((lot, i) => {
    if (lot === null || typeof lot !== 'object') throw new DriftInputError(`${path}[${i}]`, 'must be an object { lotId, value }');
    if (typeof lot.lotId !== 'string' || lot.lotId.length === 0) throw new DriftInputError(`${path}[${i}].lotId`, 'must be a non-empty string');
    if (seen.has(lot.lotId)) throw new DriftInputError(`${path}[${i}].lotId`, `duplicate lot id '${lot.lotId}'`);
    seen.add(lot.lotId);
    if (typeof lot.value !== 'number' || !Number.isFinite(lot.value)) throw new DriftInputError(`${path}[${i}].value`, 'must be a finite number');
  });
}

function mean(xs: readonly number[]): number {
  let s = 0;
  for (const x of xs) s += x;
  return s / xs.length;
}

function median(xs: readonly number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 === 1 ? s[m] : (s[m - 1] + s[m]) / 2;
}

function sampleSd(xs: readonly number[]): number {
  if (xs.length < 2) return 0;
  const m = mean(xs);
  let ss = 0;
  for (const x of xs) ss += (x - m) * (x - m);
  return Math.sqrt(ss / (xs.length - 1));
}

/**
 * Moving ranges between consecutive RETAINED lots that were adjacent in the original order. A lot removed
 * from Phase I takes both of its moving ranges with it: |x₅ − x₃| is not a span-2 moving range.
 */
function movingRangesOfRetained(values: readonly number[], retained: readonly boolean[]): number[] {
  const out: number[] = [];
  for (let i = 1; i < values.length; i++) {
    if (retained[i] && retained[i - 1]) out.push(Math.abs(values[i] - values[i - 1]));
  }
  return out;
}

/**
 * Phase I: estimate the centre and within-process σ of a metric from a stable history and freeze them.
 * σ̂ = MR̄/d₂ (d₂ = 1.128) or median(MR)/0.954; individuals limits x̄ ± L·σ̂; MR chart UCL = D₄·MR̄.
 */
export function estimatePhaseILimits(lots: readonly LotValue[], options: PhaseIOptions = {}): FrozenLimits {
  assertLotSeries(lots);
  const version = options.version ?? 1;
  const sigmaMethod = options.sigmaMethod ?? 'average-moving-range';
  const width = options.limitWidthSigma ?? 3;
  const trimRounds = options.trimRounds ?? 0;
  const minLots = options.minLots ?? 20;
  if (!Number.isInteger(version) || version < 1) throw new DriftInputError('options.version', 'must be a positive integer');
  if (!(width > 0)) throw new DriftInputError('options.limitWidthSigma', 'must be positive');
  if (!Number.isInteger(trimRounds) || trimRounds < 0) throw new DriftInputError('options.trimRounds', 'must be a non-negative integer');
  if (!Number.isInteger(minLots) || minLots < 2) throw new DriftInputError('options.minLots', 'must be an integer ≥ 2');
  if (lots.length < minLots) throw new DriftInputError('lots', `Phase I needs at least ${minLots} lots, got ${lots.length}`);

  const values = lots.map((l) => l.value);
  const retained = values.map(() => true);
  const excluded: PhaseIBasis['excluded'] = [];

  const estimate = () => {
    const kept = values.filter((_, i) => retained[i]);
    const mrs = movingRangesOfRetained(values, retained);
    if (mrs.length === 0) throw new DriftInputError('lots', 'Phase I needs at least two adjacent retained lots to form a moving range');
    const centre = mean(kept);
    const mrBar = mean(mrs);
    const sigma = sigmaMethod === 'average-moving-range' ? mrBar / D2_SPAN2 : median(mrs) / MEDIAN_MR_SPAN2;
    return { kept, mrs, centre, mrBar, sigma };
  };

  let est = estimate();
  for (let round = 0; round < trimRounds; round++) {
    const ucl = est.centre + width * est.sigma;
    const lcl = est.centre - width * est.sigma;
    const mrUcl = D4_SPAN2 * est.mrBar;
    const removeNow: { i: number; reason: PhaseIBasis['excluded'][number]['reason'] }[] = [];
    for (let i = 0; i < values.length; i++) {
      if (!retained[i]) continue;
      if (values[i] > ucl || values[i] < lcl) removeNow.push({ i, reason: 'individuals-limit' });
      else if (i > 0 && retained[i - 1] && Math.abs(values[i] - values[i - 1]) > mrUcl) {
        // A large moving range marks a jump between two lots; the later lot is the one that moved.
        removeNow.push({ i, reason: 'moving-range-limit' });
      }
    }
    if (removeNow.length === 0) break;
    for (const r of removeNow) {
      retained[r.i] = false;
      excluded.push({ lotId: lots[r.i].lotId, reason: r.reason });
    }
    if (retained.filter(Boolean).length < minLots) {
      throw new DriftInputError('lots', `after removing out-of-control lots fewer than ${minLots} remain; the history is not stable enough for Phase I`);
    }
    est = estimate();
  }

  if (!(est.sigma > 0)) throw new DriftInputError('lots', 'all moving ranges are zero; σ cannot be estimated (check the gauge resolution)');
  return {
    version,
    centre: est.centre,
    sigma: est.sigma,
    sigmaMethod,
    limitWidthSigma: width,
    individuals: { ucl: est.centre + width * est.sigma, lcl: est.centre - width * est.sigma },
    movingRange: { centre: est.mrBar, ucl: D4_SPAN2 * est.mrBar },
    basis: {
      lotIds: lots.filter((_, i) => retained[i]).map((l) => l.lotId),
      excluded,
      movingRangeCount: est.mrs.length,
      overallSd: sampleSd(est.kept),
    },
  };
}

/**
 * Frozen limits from a specified centre and σ (a product spec, a prior capability study, or a nominal).
 * The MR chart limit follows from σ as D₄·d₂·σ.
 */
export function specifiedLimits(centre: number, sigma: number, version = 1, limitWidthSigma = 3): FrozenLimits {
  if (!Number.isFinite(centre)) throw new DriftInputError('limits.centre', 'must be a finite number');
  if (!(sigma > 0) || !Number.isFinite(sigma)) throw new DriftInputError('limits.sigma', 'must be a positive finite number');
  if (!Number.isInteger(version) || version < 1) throw new DriftInputError('limits.version', 'must be a positive integer');
  if (!(limitWidthSigma > 0)) throw new DriftInputError('limits.limitWidthSigma', 'must be positive');
  const mrBar = D2_SPAN2 * sigma;
  return {
    version,
    centre,
    sigma,
    sigmaMethod: 'specified',
    limitWidthSigma,
    individuals: { ucl: centre + limitWidthSigma * sigma, lcl: centre - limitWidthSigma * sigma },
    movingRange: { centre: mrBar, ucl: D4_SPAN2 * mrBar },
    basis: null,
  };
}

export interface IndividualsPoint {
  value: number;
  centre: number;
  ucl: number;
  lcl: number;
  /** |xᵢ − xᵢ₋₁|; null for the first point. */
  movingRange: number | null;
  movingRangeUcl: number | null;
  beyondLimit: 'above' | 'below' | null;
  movingRangeBeyondLimit: boolean;
}

/** One point of the Phase II individuals chart; `previous` is the prior lot's value (null for the first). */
export function individualsPoint(value: number, previous: number | null, limits: FrozenLimits): IndividualsPoint {
  const movingRange = previous === null ? null : Math.abs(value - previous);
  const mrUcl = limits.movingRange?.ucl ?? null;
  return {
    value,
    centre: limits.centre,
    ucl: limits.individuals.ucl,
    lcl: limits.individuals.lcl,
    movingRange,
    movingRangeUcl: mrUcl,
    beyondLimit: value > limits.individuals.ucl ? 'above' : value < limits.individuals.lcl ? 'below' : null,
    movingRangeBeyondLimit: movingRange !== null && mrUcl !== null && movingRange > mrUcl,
  };
}

/** Phase II individuals chart of a series against frozen limits. */
export function individualsChart(values: readonly number[], limits: FrozenLimits): IndividualsPoint[] {
  return values.map((value, i) => individualsPoint(value, i === 0 ? null : values[i - 1], limits));
}

export interface CapabilityIndices {
  /** Within-process indices use σ̂ (MR̄/d₂); null where the spec side is missing. */
  cp: number | null;
  cpk: number | null;
  cpu: number | null;
  cpl: number | null;
  /** Overall (performance) indices use the sample standard deviation s. */
  pp: number | null;
  ppk: number | null;
  mean: number;
  sigmaWithin: number;
  sigmaOverall: number;
}

/**
 * Process capability (practice.md §4.6; AIAG SPC manual definitions): Cp = (USL − LSL)/6σ_within,
 * Cpk = min(USL − μ, μ − LSL)/3σ_within; Pp, Ppk the same with the overall s. A one-sided spec has only
 * Cpu or Cpl. Meaningful only for a stable process with an adequate gauge.
 */
export function processCapability(values: readonly number[], sigmaWithin: number, spec: { lower?: number; upper?: number }): CapabilityIndices {
  if (values.length < 2) throw new DriftInputError('values', 'capability needs at least two values');
  if (!(sigmaWithin > 0)) throw new DriftInputError('sigmaWithin', 'must be positive');
  if (spec.lower === undefined && spec.upper === undefined) throw new DriftInputError('spec', 'needs a lower or an upper limit');
  if (spec.lower !== undefined && spec.upper !== undefined && !(spec.upper > spec.lower)) throw new DriftInputError('spec.upper', 'must exceed spec.lower');
  const mu = mean(values);
  const s = sampleSd(values);
  const cpu = spec.upper !== undefined ? (spec.upper - mu) / (3 * sigmaWithin) : null;
  const cpl = spec.lower !== undefined ? (mu - spec.lower) / (3 * sigmaWithin) : null;
  const ppu = spec.upper !== undefined && s > 0 ? (spec.upper - mu) / (3 * s) : null;
  const ppl = spec.lower !== undefined && s > 0 ? (mu - spec.lower) / (3 * s) : null;
  const both = spec.lower !== undefined && spec.upper !== undefined;
  const minOf = (a: number | null, b: number | null) => (a === null ? b : b === null ? a : Math.min(a, b));
  return {
    cp: both ? (spec.upper! - spec.lower!) / (6 * sigmaWithin) : null,
    cpk: minOf(cpu, cpl),
    cpu,
    cpl,
    pp: both && s > 0 ? (spec.upper! - spec.lower!) / (6 * s) : null,
    ppk: minOf(ppu, ppl),
    mean: mu,
    sigmaWithin,
    sigmaOverall: s,
  };
}
