import type { RuleContext } from '../context.js';
import { badRuns, fmtC, fmtRangeC, fmtS, fmtTime, heldSegments, jointSegments, longest, maxOf, minOf } from '../series.js';
import { dedupKeyFor, type ProcessWindowFinding } from '../types.js';

/**
 * Bath temperature band while the load is in the bath, per bath thermocouple. Leaving the band briefly is
 * normal (the load's heat raises the salt a few degrees on immersion and the bath recovers within
 * minutes, practice.md §2.3 [M]); the spec says how long a continuous excursion may last (maxExcursionS).
 * An excursion ends only at a reading back inside the band.
 */
export function evaluateBathBand(ctx: RuleContext): ProcessWindowFinding[] {
  const bath = ctx.bath;
  if (!bath) return [];
  const w = ctx.window.bath;
  const allowedMs = w.maxExcursionS * 1000;
  const findings: ProcessWindowFinding[] = [];
  for (const tc of ctx.channels.filter((c) => c.role === 'bath-tc')) {
    const segs = heldSegments(tc.plausible, bath.startMs, bath.endMs, ctx.maxGapMs);
    const runs = badRuns(segs, (s) => (s.value === null ? 'unknown' : s.value < w.minTempC || s.value > w.maxTempC ? 'bad' : 'good'));
    const overLimit = runs.filter((r) => r.durationMs > allowedMs);
    if (overLimit.length === 0) continue;
    const worst = longest(overLimit)!;
    const outside = segs.flatMap((s) => (s.value !== null && (s.value < w.minTempC || s.value > w.maxTempC) ? [s.value] : []));
    const highC = maxOf(outside.filter((v) => v > w.maxTempC));
    const lowC = minOf(outside.filter((v) => v < w.minTempC));
    const extremes = [highC !== null ? `high ${fmtC(highC)}` : null, lowC !== null ? `low ${fmtC(lowC)}` : null].filter(Boolean).join(', ');
    findings.push({
      rule: 'bath-band-excursion',
      severity: 'MAJOR',
      dedupKey: dedupKeyFor(ctx.batchId, 'bath-band-excursion', tc.channelId),
      channelId: tc.channelId,
      message:
        `Bath thermocouple ${tc.code} outside ${fmtRangeC(w.minTempC, w.maxTempC)} for ${fmtS(worst.durationMs)} ` +
        `from ${ctx.clock(worst.fromMs)} (allowed ${w.maxExcursionS} s; ${extremes})` +
        (overLimit.length > 1 ? `; ${overLimit.length} excursions over the limit` : ''),
      details: {
        channelCode: tc.code,
        minTempC: w.minTempC,
        maxTempC: w.maxTempC,
        maxExcursionS: w.maxExcursionS,
        longestExcursionS: worst.durationMs / 1000,
        longestExcursionFrom: fmtTime(worst.fromMs),
        excursionsOverLimit: overLimit.length,
        excursionsTotal: runs.length,
        timeOutsideBandS: runs.reduce((a, r) => a + r.durationMs, 0) / 1000,
        highestC: highC,
        lowestC: lowC,
      },
    });
  }
  return findings;
}

/**
 * Two thermocouples on one bath that disagree by more than maxDiffC for at least minDurationS: one of
 * them (or its wiring) is off, and the band checks above cannot be trusted for that stretch. Pairs every
 * bath thermocouple with every other; the pair's dedupKey joins the two channel ids in sorted order.
 */
export function evaluateTwinDisagreement(ctx: RuleContext): ProcessWindowFinding[] {
  const bath = ctx.bath;
  if (!bath) return [];
  const { maxDiffC, minDurationS } = ctx.window.twinTolerance;
  const tcs = ctx.channels.filter((c) => c.role === 'bath-tc');
  const findings: ProcessWindowFinding[] = [];
  for (let i = 0; i < tcs.length; i++) {
    for (let j = i + 1; j < tcs.length; j++) {
      const [a, b] = [tcs[i], tcs[j]].sort((x, y) => (x.channelId < y.channelId ? -1 : 1));
      const joint = jointSegments(
        [heldSegments(a.plausible, bath.startMs, bath.endMs, ctx.maxGapMs), heldSegments(b.plausible, bath.startMs, bath.endMs, ctx.maxGapMs)],
        bath.startMs,
        bath.endMs,
      );
      const diff = (s: { values: (number | null)[] }) =>
        s.values[0] === null || s.values[1] === null ? null : Math.abs(s.values[0] - s.values[1]);
      const runs = badRuns(joint, (s) => {
        const d = diff(s);
        return d === null ? 'unknown' : d > maxDiffC ? 'bad' : 'good';
      });
      const overLimit = runs.filter((r) => r.durationMs >= minDurationS * 1000);
      if (overLimit.length === 0) continue;
      const worst = longest(overLimit)!;
      const largestDiffC = maxOf(joint.flatMap((s) => (diff(s) === null ? [] : [diff(s)!]))) ?? 0;
      findings.push({
        rule: 'thermocouple-disagreement',
        severity: 'MINOR',
        dedupKey: dedupKeyFor(ctx.batchId, 'thermocouple-disagreement', `${a.channelId}+${b.channelId}`),
        channelId: null,
        message:
          `Bath thermocouples ${a.code} and ${b.code} differ by more than ${fmtC(maxDiffC)} for ${fmtS(worst.durationMs)} ` +
          `from ${ctx.clock(worst.fromMs)} (largest difference ${fmtC(largestDiffC)}; tolerated ${minDurationS} s)`,
        details: {
          channelIds: [a.channelId, b.channelId],
          channelCodes: [a.code, b.code],
          maxDiffC,
          minDurationS,
          largestDiffC,
          longestDisagreementS: worst.durationMs / 1000,
          disagreementsOverLimit: overLimit.length,
        },
      });
    }
  }
  return findings;
}
