import type { ErrorIssue } from '../http/errors.js';

/**
 * Device clocks drift (practice.md §5.2: about ±2.6 s/day uncorrected); a time far ahead of the
 * server clock is a wrong clock or a wrong unit, not a measurement. Late times are fine: controllers
 * store and forward after outages (practice.md §5.3).
 */
export function futureTimeIssue(tMs: number, nowMs: number, maxFutureMs: number, path: string): ErrorIssue | undefined {
  const aheadMs = tMs - nowMs;
  if (aheadMs <= maxFutureMs) return undefined;
  return {
    path,
    message: `${new Date(tMs).toISOString()} is ${describeDuration(aheadMs)} ahead of the server clock (limit ${describeDuration(maxFutureMs)}); check the device clock`,
  };
}

export function describeDuration(ms: number): string {
  const s = ms / 1000;
  if (s < 120) return `${s.toFixed(s < 10 ? 1 : 0)} s`;
  const min = s / 60;
  if (min < 120) return `${min.toFixed(1)} min`;
  const h = min / 60;
  if (h < 48) return `${h.toFixed(1)} h`;
  return `${(h / 24).toFixed(1)} days`;
}
