// Turning a stated limit ("±X °C (±Y °F) or P % of reading, whichever is greater") into a band in
// °C for one reading, and comparing against it without floating-point surprises.

import { PyrometryInputError } from './errors.js';
import type { AccuracyLimit } from './types.js';

/** Which of the two stated units governs; the plant's procedure or purchase order decides. */
export type LimitUnit = 'C' | 'F';

/**
 * Readings are entered to 0.1° or 0.01°; differences of such numbers in binary floating point
 * land a hair off (871.7 − 870.0 = 1.7000000000000455). Anything within this of the limit is on the
 * limit. It is far below any instrument's readability, so it never turns a real failure into a pass.
 */
export const COMPARISON_EPSILON = 1e-9;

export function cToF(tempC: number): number {
  return (tempC * 9) / 5 + 32;
}

export function fToC(tempF: number): number {
  return ((tempF - 32) * 5) / 9;
}

/** A temperature difference in °F as a difference in °C (no 32° offset). */
export function deltaFToDeltaC(deltaF: number): number {
  return (deltaF * 5) / 9;
}

export function deltaCToDeltaF(deltaC: number): number {
  return (deltaC * 9) / 5;
}

export interface ResolvedLimit {
  /** Half-width of the band in °C for this reading. */
  readonly bandC: number;
  /** The same band in the governing unit, as the standard states it. */
  readonly bandInUnit: number;
  readonly unit: LimitUnit;
  /** Which alternative governed: the absolute value or the percentage of reading. */
  readonly governedBy: 'absolute' | 'percent-of-reading';
  readonly text: string;
}

/**
 * The band for a reading. The percentage is taken of the reading in the governing unit; with °F
 * that is the °F reading. That is our reading of "% of reading" (practice.md does not say which
 * scale) and it is flagged in results as an assumption whenever the percentage governs in °F.
 */
export function resolveLimit(limit: AccuracyLimit, unit: LimitUnit, readingC: number, path = 'limit'): ResolvedLimit {
  const absolute = unit === 'C' ? limit.plusMinusC : limit.plusMinusF;
  if (absolute === null) {
    throw new PyrometryInputError(`${path}.unit`, `the reference states this limit in °C only; judge it in °C`);
  }
  const reading = unit === 'C' ? readingC : cToF(readingC);
  const percentBand = limit.pctOfReading === null ? 0 : (limit.pctOfReading / 100) * Math.abs(reading);
  const governedBy = percentBand > absolute ? 'percent-of-reading' : 'absolute';
  const bandInUnit = Math.max(absolute, percentBand);
  const bandC = unit === 'C' ? bandInUnit : deltaFToDeltaC(bandInUnit);
  const stated = `±${absolute} °${unit}${limit.pctOfReading === null ? '' : ` or ${limit.pctOfReading} % of reading, whichever is greater`}`;
  return {
    bandC,
    bandInUnit,
    unit,
    governedBy,
    text: governedBy === 'absolute' ? stated : `${stated} (${limit.pctOfReading} % of ${round(reading, 1)} °${unit} = ±${round(bandInUnit, 3)} °${unit})`,
  };
}

export function withinBand(deviation: number, band: number): boolean {
  return Math.abs(deviation) <= band + COMPARISON_EPSILON;
}

/** Rounds for reports only; judging always uses the unrounded numbers (with the epsilon above). */
export function round(value: number, decimals: number): number {
  const f = 10 ** decimals;
  return Math.round(value * f) / f;
}
