import type { VerdictLevel } from '@ausline/contracts';

/**
 * Judging an uncertainty band (p05 / p50 / p95 of the prediction ensemble) against a limit:
 *  - conforming:    the whole band is inside the limit (≥ 95 % of the plausible models meet it);
 *  - nonconforming: the whole band is outside it (≥ 95 % of them break it);
 *  - at-risk:       the band crosses the limit.
 * A missing percentile (null) is "not finite": the caller says whether it stands for +∞ (a ratio with no blocky
 * austenite, a time never reached) or −∞; a null whose side is unknown makes the verdict at best at-risk.
 */

export interface NumericBand {
  p05: number | null;
  p50: number | null;
  p95: number | null;
}

/** What a null percentile stands for. */
export type NullMeans = 'plus-infinity' | 'minus-infinity' | 'unknown';

function value(v: number | null, nullMeans: NullMeans): number | null {
  if (v !== null) return v;
  if (nullMeans === 'plus-infinity') return Infinity;
  if (nullMeans === 'minus-infinity') return -Infinity;
  return null;
}

/** Quantity must be at least `min`. */
export function judgeMin(band: NumericBand, min: number, nullMeans: NullMeans = 'unknown'): VerdictLevel {
  const lo = value(band.p05, nullMeans);
  const hi = value(band.p95, nullMeans);
  if (lo !== null && lo >= min) return 'conforming';
  if (hi !== null && hi < min) return 'nonconforming';
  return 'at-risk';
}

/** Quantity must be at most `max`. */
export function judgeMax(band: NumericBand, max: number, nullMeans: NullMeans = 'unknown'): VerdictLevel {
  const lo = value(band.p05, nullMeans);
  const hi = value(band.p95, nullMeans);
  if (hi !== null && hi <= max) return 'conforming';
  if (lo !== null && lo > max) return 'nonconforming';
  return 'at-risk';
}

/** Quantity must lie in [min, max] (either side optional). The worse of the two one-sided verdicts. */
export function judgeRange(band: NumericBand, min: number | undefined, max: number | undefined, nullMeans: NullMeans = 'unknown'): VerdictLevel {
  const verdicts: VerdictLevel[] = [];
  if (min !== undefined) verdicts.push(judgeMin(band, min, nullMeans));
  if (max !== undefined) verdicts.push(judgeMax(band, max, nullMeans));
  return worstVerdict(verdicts) ?? 'conforming';
}

const ORDER: readonly VerdictLevel[] = ['conforming', 'at-risk', 'nonconforming'];

/** The worst of a list of verdicts; null for an empty list (no verdict is not "conforming"). */
export function worstVerdict(list: Iterable<VerdictLevel>): VerdictLevel | null {
  let worst: VerdictLevel | null = null;
  for (const v of list) if (worst === null || ORDER.indexOf(v) > ORDER.indexOf(worst)) worst = v;
  return worst;
}

/** One-sided z of the 5 % / 95 % points of a normal distribution. */
export const ONE_SIDED_Z95 = 1.6448536269514722;
