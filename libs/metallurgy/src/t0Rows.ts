/** The `ausline t0` computation: T0 and T0′ (400 J/mol, 'calphad' description) over a temperature range. */
import type { T0Input } from './input.js';
import { t0Curve } from './thermo/index.js';

export function t0Rows(input: T0Input): { rows: Array<{ tempC: number; t0CarbonWtPct: number; t0PrimeCarbonWtPct: number }> } {
  const rows = t0Curve(input.chemistryWtPct, input.fromC, input.toC, input.stepC).map((r) => ({
    tempC: Math.round(r.tempC * 1e6) / 1e6,
    t0CarbonWtPct: Math.round(r.t0CarbonWtPct * 1e5) / 1e5,
    t0PrimeCarbonWtPct: Math.round(r.t0PrimeCarbonWtPct * 1e5) / 1e5,
  }));
  return { rows };
}
