import { phaseOf, roleLabel, type RuleContext } from '../context.js';
import { fmtC, fmtMin, fmtRangeC, fmtS, fmtTime, samplesWithin } from '../series.js';
import { dedupKeyFor, type ProcessWindowFinding } from '../types.js';

/**
 * Recording gaps: while the load is in a channel's step (furnace zones in the furnace, bath thermocouples
 * in the bath), consecutive readings must be no further apart than maxChannelGapS. The phase's start and
 * end count as edges (no reading since the start is a gap too). For a step still running the trailing
 * edge is now minus the ingest allowance, so a controller that stopped sending is noticed while the load
 * is still in. practice.md §5.3: a recording gap during a load is a compliance question ("record
 * incomplete"), not missing data to interpolate.
 */
export function evaluateChannelGaps(ctx: RuleContext): ProcessWindowFinding[] {
  const findings: ProcessWindowFinding[] = [];
  for (const ch of ctx.channels) {
    const p = phaseOf(ctx, ch.role);
    if (!p) continue;
    const startMs = p.startMs;
    const endMs = p.open ? ctx.nowMs - ctx.allowanceMs : p.endMs;
    if (!(endMs > startMs)) continue;
    const gaps: { fromMs: number; toMs: number }[] = [];
    let lastMs = startMs;
    for (const s of ch.raw) {
      if (s.tMs <= startMs) continue;
      if (s.tMs > endMs) break;
      if (s.tMs - lastMs > ctx.maxGapMs) gaps.push({ fromMs: lastMs, toMs: s.tMs });
      lastMs = s.tMs;
    }
    if (endMs - lastMs > ctx.maxGapMs) gaps.push({ fromMs: lastMs, toMs: endMs });
    if (gaps.length === 0) continue;
    const worst = gaps.reduce((a, g) => (g.toMs - g.fromMs > a.toMs - a.fromMs ? g : a));
    const totalMs = gaps.reduce((a, g) => a + (g.toMs - g.fromMs), 0);
    const worstMs = worst.toMs - worst.fromMs;
    const stillOpen = p.open && worst.toMs === endMs;
    findings.push({
      rule: 'channel-gap',
      severity: 'MAJOR',
      dedupKey: dedupKeyFor(ctx.batchId, 'channel-gap', ch.channelId),
      channelId: ch.channelId,
      message:
        `${roleLabel(ch.role)} ${ch.code} recorded nothing for ${fmtS(worstMs)} from ${ctx.clock(worst.fromMs)}` +
        `${stillOpen ? ' (still silent)' : ''} (allowed gap ${ctx.window.maxChannelGapS} s)` +
        (gaps.length > 1 ? `; ${gaps.length} gaps, ${fmtS(totalMs)} in all` : ''),
      details: {
        channelCode: ch.code,
        maxChannelGapS: ctx.window.maxChannelGapS,
        longestGapS: worstMs / 1000,
        longestGapFrom: fmtTime(worst.fromMs),
        gapCount: gaps.length,
        totalGapS: totalMs / 1000,
        gaps: gaps.slice(0, 20).map((g) => ({ from: fmtTime(g.fromMs), to: fmtTime(g.toMs), seconds: (g.toMs - g.fromMs) / 1000 })),
      },
    });
  }
  return findings;
}

/**
 * Flat-lined signal: the readings stay within epsilonC of each other for minDurationS or longer. A live
 * thermocouple in a working furnace or agitated bath always moves by a few tenths (common practice); a
 * frozen value means a stuck transmitter or a controller repeating its last value. Longest such run per
 * channel, found in one pass with monotonic min/max queues.
 */
export function evaluateFlatline(ctx: RuleContext): ProcessWindowFinding[] {
  const { minDurationS, epsilonC } = ctx.window.flatline;
  const findings: ProcessWindowFinding[] = [];
  for (const ch of ctx.channels) {
    const p = phaseOf(ctx, ch.role);
    if (!p) continue;
    const xs = samplesWithin(ch.plausible, p.startMs, p.endMs);
    const run = longestFlatRun(xs.map((s) => s.tMs), xs.map((s) => s.valueC), epsilonC);
    if (!run || run.durationMs < minDurationS * 1000) continue;
    findings.push({
      rule: 'signal-flatline',
      severity: 'MAJOR',
      dedupKey: dedupKeyFor(ctx.batchId, 'signal-flatline', ch.channelId),
      channelId: ch.channelId,
      message:
        `${roleLabel(ch.role)} ${ch.code} flat at ${fmtRangeC(run.lowC, run.highC)} for ${fmtMin(run.durationMs)} ` +
        `from ${ctx.clock(run.fromMs)} (${run.count} readings within ${epsilonC} °C; limit ${minDurationS} s): check the sensor`,
      details: {
        channelCode: ch.code,
        flatForS: run.durationMs / 1000,
        flatFrom: fmtTime(run.fromMs),
        readings: run.count,
        lowC: run.lowC,
        highC: run.highC,
        epsilonC,
        minDurationS,
      },
    });
  }
  return findings;
}

export interface FlatRun {
  fromMs: number;
  durationMs: number;
  count: number;
  lowC: number;
  highC: number;
}

/** Longest stretch of consecutive readings whose spread (max - min) stays within epsilon. O(n). */
export function longestFlatRun(tMs: readonly number[], v: readonly number[], epsilon: number): FlatRun | null {
  if (tMs.length < 2) return null;
  const maxQ: number[] = [];
  const minQ: number[] = [];
  let maxHead = 0;
  let minHead = 0;
  let left = 0;
  let best: { l: number; r: number } | null = null;
  for (let r = 0; r < v.length; r++) {
    while (maxQ.length > maxHead && v[maxQ[maxQ.length - 1]] <= v[r]) maxQ.pop();
    maxQ.push(r);
    while (minQ.length > minHead && v[minQ[minQ.length - 1]] >= v[r]) minQ.pop();
    minQ.push(r);
    while (v[maxQ[maxHead]] - v[minQ[minHead]] > epsilon) {
      left++;
      while (maxQ[maxHead] < left) maxHead++;
      while (minQ[minHead] < left) minHead++;
    }
    if (r > left && (!best || tMs[r] - tMs[left] > tMs[best.r] - tMs[best.l])) best = { l: left, r };
  }
  if (!best) return null;
  let lowC = v[best.l];
  let highC = v[best.l];
  for (let i = best.l; i <= best.r; i++) {
    lowC = Math.min(lowC, v[i]);
    highC = Math.max(highC, v[i]);
  }
  return { fromMs: tMs[best.l], durationMs: tMs[best.r] - tMs[best.l], count: best.r - best.l + 1, lowC, highC };
}

/**
 * Physically implausible readings: outside the plausible range for the equipment (an open thermocouple
 * reads full scale, a shorted one ambient) or changing faster between consecutive readings than the mass
 * of a furnace or salt bath allows (maxRateCPerS).
 */
export function evaluateImplausible(ctx: RuleContext): ProcessWindowFinding[] {
  const { minTempC, maxTempC, maxRateCPerS } = ctx.window.plausible;
  const findings: ProcessWindowFinding[] = [];
  for (const ch of ctx.channels) {
    const p = phaseOf(ctx, ch.role);
    if (!p) continue;
    const xs = samplesWithin(ch.raw, p.startMs, p.endMs);
    const outOfRange = xs.filter((s) => s.valueC < minTempC || s.valueC > maxTempC);
    const jumps: { atMs: number; rateCPerS: number }[] = [];
    for (let i = 1; i < xs.length; i++) {
      const rate = Math.abs(xs[i].valueC - xs[i - 1].valueC) / ((xs[i].tMs - xs[i - 1].tMs) / 1000);
      if (rate > maxRateCPerS) jumps.push({ atMs: xs[i].tMs, rateCPerS: rate });
    }
    if (outOfRange.length === 0 && jumps.length === 0) continue;
    const parts: string[] = [];
    if (outOfRange.length > 0) {
      const first = outOfRange[0];
      parts.push(
        `${outOfRange.length} reading${outOfRange.length > 1 ? 's' : ''} outside the plausible ${fmtRangeC(minTempC, maxTempC)} ` +
          `(first ${fmtC(first.valueC)} at ${ctx.clock(first.tMs)})`,
      );
    }
    const fastest = jumps.length > 0 ? jumps.reduce((a, j) => (j.rateCPerS > a.rateCPerS ? j : a)) : null;
    if (fastest) {
      parts.push(
        `${jumps.length} jump${jumps.length > 1 ? 's' : ''} faster than ${maxRateCPerS} °C/s ` +
          `(fastest ${fastest.rateCPerS.toFixed(1)} °C/s at ${ctx.clock(fastest.atMs)})`,
      );
    }
    findings.push({
      rule: 'signal-implausible',
      severity: 'MAJOR',
      dedupKey: dedupKeyFor(ctx.batchId, 'signal-implausible', ch.channelId),
      channelId: ch.channelId,
      message: `${roleLabel(ch.role)} ${ch.code}: ${parts.join('; ')}`,
      details: {
        channelCode: ch.code,
        outOfRangeCount: outOfRange.length,
        firstOutOfRangeC: outOfRange[0]?.valueC ?? null,
        firstOutOfRangeAt: outOfRange[0] ? fmtTime(outOfRange[0].tMs) : null,
        jumpCount: jumps.length,
        fastestRateCPerS: fastest?.rateCPerS ?? null,
        plausibleMinC: minTempC,
        plausibleMaxC: maxTempC,
        maxRateCPerS,
      },
    });
  }
  return findings;
}
