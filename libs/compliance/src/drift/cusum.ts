// Tabular (decision-interval) CUSUM for individuals (Page 1954; practice.md §4.4; Montgomery,
// Introduction to SQC, §9.1; Montgomery & Runger ch. 16). Standardised form, yᵢ = (xᵢ − μ₀)/σ:
//
//   C⁺ᵢ = max(0, yᵢ − k + C⁺ᵢ₋₁)      C⁻ᵢ = max(0, −yᵢ − k + C⁻ᵢ₋₁)      signal when C > h
//
// k and h are in σ units. k is half the shift (in σ) the chart should catch fastest; h sets the
// in-control ARL. Fast initial response (Lucas & Crosier 1982) starts both sums at a head start
// (typically h/2) so that a process that is already off target at (re)start is caught sooner, at
// little cost in false alarms when it is on target.
//
// After a signal the new mean is estimated as μ̂ = μ₀ + σ·(k + C⁺/N⁺) (or μ₀ − σ·(k + C⁻/N⁻)), where N
// is the number of consecutive periods the sum has been non-zero (Montgomery §9.1.2).

import type { ChartBasis } from './types.js';

export interface CusumParameters {
  /** Reference value in σ units. */
  k: number;
  /** Decision interval in σ units. */
  h: number;
  /** Starting value of both sums in σ units (0 = none, h/2 = the usual FIR head start). */
  headStart: number;
}

export interface CusumState {
  upper: number;
  lower: number;
  /** Consecutive periods with C⁺ > 0 (resp. C⁻ > 0), for the shift estimate. */
  upperRun: number;
  lowerRun: number;
}

export interface CusumPoint extends CusumState {
  /** Standardised value yᵢ = (xᵢ − μ₀)/σ. */
  standardized: number;
  h: number;
  signal: 'up' | 'down' | 'both' | null;
  /** μ̂ after an upper (lower) signal, in the metric's unit; null when that side does not signal. */
  estimatedMeanUp: number | null;
  estimatedMeanDown: number | null;
}

/** State at (re)start: both sums at the head start. A non-zero head start counts as one non-zero period. */
export function cusumInitialState(params: CusumParameters): CusumState {
  const run = params.headStart > 0 ? 1 : 0;
  return { upper: params.headStart, lower: params.headStart, upperRun: run, lowerRun: run };
}

export function cusumUpdate(state: CusumState, value: number, basis: ChartBasis, params: CusumParameters): CusumPoint {
  const y = (value - basis.centre) / basis.sigma;
  const upper = Math.max(0, y - params.k + state.upper);
  const lower = Math.max(0, -y - params.k + state.lower);
  const upperRun = upper > 0 ? state.upperRun + 1 : 0;
  const lowerRun = lower > 0 ? state.lowerRun + 1 : 0;
  const up = upper > params.h;
  const down = lower > params.h;
  return {
    upper,
    lower,
    upperRun,
    lowerRun,
    standardized: y,
    h: params.h,
    signal: up && down ? 'both' : up ? 'up' : down ? 'down' : null,
    estimatedMeanUp: up ? basis.centre + basis.sigma * (params.k + upper / upperRun) : null,
    estimatedMeanDown: down ? basis.centre - basis.sigma * (params.k + lower / lowerRun) : null,
  };
}

/** Tabular CUSUM of a whole series (batch form). */
export function cusumChart(values: readonly number[], basis: ChartBasis, params: CusumParameters): CusumPoint[] {
  const out: CusumPoint[] = [];
  let state = cusumInitialState(params);
  for (const v of values) {
    const p = cusumUpdate(state, v, basis, params);
    out.push(p);
    state = p;
  }
  return out;
}
