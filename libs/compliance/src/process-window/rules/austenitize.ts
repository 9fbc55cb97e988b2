import type { RuleContext } from '../context.js';
import { badRuns, maxOf, minOf, fmtC, fmtRangeC, fmtMin, fmtS, fmtTime, heldSegments, jointSegments, longest, strictGoodRuns, type Run } from '../series.js';
import { dedupKeyFor, type ProcessWindowFinding } from '../types.js';

export interface AustenitizeResult {
  findings: ProcessWindowFinding[];
  /** Longest continuous soak with every zone at or above the minimum, ms (null before the load is charged). */
  longestSoakMs: number | null;
}

/**
 * Austenitize temperature and time, from the furnace zones while the load is in the furnace.
 *
 * Soak starts when every furnace zone reads at or above minTempC (the furnace recovers from charging a
 * cold load first, so readings below the band before that are expected). The minimum time is the
 * longest continuous soak: a drop of any zone below the minimum, or a stretch without readings,
 * restarts it (common practice: time at temperature is counted only while the record proves it). The
 * maximum time, when set, is the total time at or above the minimum (grain growth and decarburization
 * add up). Temperature: no zone may read above maxTempC while the load is in, nor below minTempC once
 * the soak has begun.
 */
export function evaluateAustenitize(ctx: RuleContext): AustenitizeResult {
  const furnace = ctx.furnace;
  if (!furnace) return { findings: [], longestSoakMs: null };
  const w = ctx.window.austenitize;
  const zones = ctx.channels.filter((c) => c.role === 'furnace-zone');
  const zoneSegments = zones.map((z) => heldSegments(z.plausible, furnace.startMs, furnace.endMs, ctx.maxGapMs));
  const joint = jointSegments(zoneSegments, furnace.startMs, furnace.endMs);
  const soakRuns = zones.length === 0 ? [] : strictGoodRuns(joint, (s) => s.values.every((v) => v !== null && v >= w.minTempC));
  const soak = longest(soakRuns);
  const longestSoakMs = soak?.durationMs ?? 0;
  const totalAtTempMs = soakRuns.reduce((sum, r) => sum + r.durationMs, 0);
  const soakStartMs = soakRuns[0]?.fromMs ?? null;
  const findings: ProcessWindowFinding[] = [];

  // Time. One finding per batch: a short longest soak and a long total can both hold when the soak was
  // interrupted many times; they are reported together under one dedupKey.
  const minMs = w.minMinutes * 60_000;
  const tooShort = !furnace.open && longestSoakMs < minMs;
  const tooLong = w.maxMinutes !== undefined && totalAtTempMs > w.maxMinutes * 60_000;
  if (tooShort || tooLong) {
    const parts: string[] = [];
    if (tooShort) {
      const why =
        zones.length === 0
          ? 'no furnace zone channel is configured, so the soak cannot be shown'
          : soakStartMs === null
            ? `the furnace zones never all reached ${fmtC(w.minTempC)}`
            : `longest soak with every zone at ≥ ${fmtC(w.minTempC)} was ${fmtMin(longestSoakMs)}`;
      parts.push(`soak too short: ${why} (minimum ${w.minMinutes} min)`);
    }
    if (tooLong) {
      parts.push(
        `too long: ${fmtMin(totalAtTempMs)} at ≥ ${fmtC(w.minTempC)}` +
          `${furnace.open ? ' so far, load still in the furnace' : ''} (maximum ${w.maxMinutes} min)`,
      );
    }
    findings.push({
      rule: 'austenitize-time',
      // Too short risks incomplete austenitizing and a slack quench (practice.md §2.5); too long coarsens grain.
      severity: tooShort ? 'CRITICAL' : 'MAJOR',
      dedupKey: dedupKeyFor(ctx.batchId, 'austenitize-time'),
      channelId: null,
      message: `Austenitize ${parts.join('; ')}`,
      details: {
        tooShort,
        tooLong,
        longestSoakMin: longestSoakMs / 60_000,
        totalAtTempMin: totalAtTempMs / 60_000,
        minMinutes: w.minMinutes,
        maxMinutes: w.maxMinutes ?? null,
        soakStartedAt: soakStartMs === null ? null : fmtTime(soakStartMs),
        furnaceZoneCount: zones.length,
        stillInFurnace: furnace.open,
      },
    });
  }

  // Temperature, per zone.
  zones.forEach((zone, i) => {
    const segs = zoneSegments[i];
    const above = badRuns(segs, (s) => (s.value === null ? 'unknown' : s.value > w.maxTempC ? 'bad' : 'good'));
    const below =
      soakStartMs === null
        ? []
        : badRuns(
            segs.filter((s) => s.toMs > soakStartMs),
            (s) => (s.value === null ? 'unknown' : s.value < w.minTempC ? 'bad' : 'good'),
          );
    if (above.length === 0 && below.length === 0) return;
    const known = (list: typeof segs) => list.flatMap((s) => (s.value === null ? [] : [s.value]));
    const peakC = maxOf(known(segs)) ?? Number.NaN;
    const lowDuringSoakC = soakStartMs === null ? null : minOf(known(segs.filter((s) => s.toMs > soakStartMs)));
    const parts: string[] = [];
    const longestAbove = longest(above);
    const longestBelow = longest(below);
    if (longestAbove) parts.push(`above ${fmtC(w.maxTempC)} for ${fmtS(longestAbove.durationMs)} from ${ctx.clock(longestAbove.fromMs)} (peak ${fmtC(peakC)})`);
    if (longestBelow && lowDuringSoakC !== null) {
      parts.push(`below ${fmtC(w.minTempC)} for ${fmtS(longestBelow.durationMs)} during the soak from ${ctx.clock(longestBelow.fromMs)} (low ${fmtC(lowDuringSoakC)})`);
    }
    const sum = (runs: Run[]) => runs.reduce((a, r) => a + r.durationMs, 0) / 1000;
    findings.push({
      rule: 'austenitize-temp',
      severity: 'MAJOR',
      dedupKey: dedupKeyFor(ctx.batchId, 'austenitize-temp', zone.channelId),
      channelId: zone.channelId,
      message: `Furnace zone ${zone.code} ${parts.join('; ')}; band ${fmtRangeC(w.minTempC, w.maxTempC)}`,
      details: {
        channelCode: zone.code,
        minTempC: w.minTempC,
        maxTempC: w.maxTempC,
        peakC,
        lowDuringSoakC,
        aboveMaxCount: above.length,
        aboveMaxTotalS: sum(above),
        longestAboveMaxS: longestAbove ? longestAbove.durationMs / 1000 : 0,
        belowMinDuringSoakCount: below.length,
        belowMinDuringSoakTotalS: sum(below),
        longestBelowMinS: longestBelow ? longestBelow.durationMs / 1000 : 0,
      },
    });
  });

  return { findings, longestSoakMs: zones.length === 0 ? null : longestSoakMs };
}
