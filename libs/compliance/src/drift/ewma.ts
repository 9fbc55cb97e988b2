// EWMA chart for individuals (Roberts 1959; practice.md §4.3; NIST/SEMATECH e-Handbook §6.3.2.4;
// Montgomery, Introduction to SQC, §9.2).
//
//   zₜ = λ·xₜ + (1 − λ)·zₜ₋₁,  z₀ = centre
//   σ_z(t) = σ·√( λ/(2−λ) · [1 − (1−λ)^(2t)] )        (exact, time-varying)
//   σ_z(∞) = σ·√( λ/(2−λ) )                          (asymptotic, steady state)
//   limits = centre ± L·σ_z
//
// The exact limits are narrower for the first few lots, which makes the chart quicker to catch a
// process that starts off target; the asymptotic limits are the ones the Lucas & Saccucci (1990) ARL
// tables were computed for, so the design ARL holds exactly only with them.

import type { ChartBasis } from './types.js';

export type EwmaLimitMode = 'exact' | 'asymptotic';

export interface EwmaParameters {
  /** Smoothing weight of the newest value, 0 < λ ≤ 1 (λ = 1 is the Shewhart individuals chart). */
  lambda: number;
  /** Limit width in units of σ_z. */
  L: number;
  limits: EwmaLimitMode;
}

export interface EwmaPoint {
  statistic: number;
  centre: number;
  ucl: number;
  lcl: number;
  /** Limit half-width in units of σ (not σ_z): L·√(λ/(2−λ)·[…]). */
  halfWidthSigma: number;
  signal: 'up' | 'down' | null;
}

/** Standard deviation of the EWMA statistic after t ≥ 1 updates, in units of σ (t = Infinity gives the asymptote). */
export function ewmaSigmaFactor(lambda: number, t: number): number {
  const steady = lambda / (2 - lambda);
  if (!Number.isFinite(t)) return Math.sqrt(steady);
  return Math.sqrt(steady * (1 - Math.pow(1 - lambda, 2 * t)));
}

/** Limit half-width in σ units at update t (1-based). */
export function ewmaHalfWidthSigma(params: EwmaParameters, t: number): number {
  return params.L * ewmaSigmaFactor(params.lambda, params.limits === 'exact' ? t : Number.POSITIVE_INFINITY);
}

/**
 * One EWMA update: the new statistic and the point record. `t` is the 1-based number of updates since
 * the chart (re)started, which the exact limits need.
 */
export function ewmaUpdate(previous: number, value: number, t: number, basis: ChartBasis, params: EwmaParameters): EwmaPoint {
  const statistic = params.lambda * value + (1 - params.lambda) * previous;
  const halfWidthSigma = ewmaHalfWidthSigma(params, t);
  const ucl = basis.centre + halfWidthSigma * basis.sigma;
  const lcl = basis.centre - halfWidthSigma * basis.sigma;
  return {
    statistic,
    centre: basis.centre,
    ucl,
    lcl,
    halfWidthSigma,
    signal: statistic > ucl ? 'up' : statistic < lcl ? 'down' : null,
  };
}

/** EWMA chart of a whole series (batch form), starting from z₀ = centre. */
export function ewmaChart(values: readonly number[], basis: ChartBasis, params: EwmaParameters): EwmaPoint[] {
  const out: EwmaPoint[] = [];
  let z = basis.centre;
  for (let i = 0; i < values.length; i++) {
    const p = ewmaUpdate(z, values[i], i + 1, basis, params);
    out.push(p);
    z = p.statistic;
  }
  return out;
}
