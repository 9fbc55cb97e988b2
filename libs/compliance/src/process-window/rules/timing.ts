import type { RuleContext } from '../context.js';
import { fmtMin, fmtS } from '../series.js';
import { dedupKeyFor, type LoadEventTimes, type ProcessWindowFinding } from '../types.js';

const EVENT_ORDER: { key: keyof LoadEventTimes; name: string }[] = [
  { key: 'chargedMs', name: 'CHARGED' },
  { key: 'outOfFurnaceMs', name: 'OUT_OF_FURNACE' },
  { key: 'intoBathMs', name: 'INTO_BATH' },
  { key: 'outOfBathMs', name: 'OUT_OF_BATH' },
];

/**
 * Load events must come in the order the load travels: charged, out of furnace, into bath, out of bath.
 * A later event without an earlier one is reported once the later one is older than the ingest latency
 * allowance (the earlier event may be posted by another controller a little later); a later event timed
 * before an earlier one is reported at once (clock or operator error: transfer and hold cannot be trusted).
 */
export function evaluateEventOrder(ctx: RuleContext): ProcessWindowFinding[] {
  const problems: string[] = [];
  const missing: string[] = [];
  const reversed: string[] = [];
  for (let i = 1; i < EVENT_ORDER.length; i++) {
    const later = EVENT_ORDER[i];
    const laterMs = ctx.events[later.key];
    if (laterMs === undefined) continue;
    for (let j = 0; j < i; j++) {
      const earlier = EVENT_ORDER[j];
      const earlierMs = ctx.events[earlier.key];
      if (earlierMs === undefined) {
        if (ctx.nowMs - laterMs > ctx.allowanceMs && !missing.includes(earlier.name)) {
          missing.push(earlier.name);
          problems.push(`${later.name} at ${ctx.clock(laterMs)} but no ${earlier.name}`);
        }
      } else if (earlierMs > laterMs) {
        reversed.push(`${earlier.name}>${later.name}`);
        problems.push(`${later.name} at ${ctx.clock(laterMs)} is before ${earlier.name} at ${ctx.clock(earlierMs)}`);
      }
    }
  }
  if (problems.length === 0) return [];
  return [
    {
      rule: 'load-event-order',
      severity: 'MAJOR',
      dedupKey: dedupKeyFor(ctx.batchId, 'load-event-order'),
      channelId: null,
      message: `Load events out of order: ${problems.join('; ')}`,
      details: { missing, reversed },
    },
  ];
}

/**
 * Transfer from furnace to bath (OUT_OF_FURNACE to INTO_BATH), against the recipe's maximum (practice.md
 * §2.4: measured from PLC events on the same clock, never assumed). A load still between the two is
 * reported as soon as it is certainly late (elapsed time minus the ingest allowance above the limit).
 */
export function evaluateTransfer(ctx: RuleContext): { findings: ProcessWindowFinding[]; transferMs: number | null } {
  const t = ctx.transfer;
  if (!t) return { findings: [], transferMs: null };
  const maxMs = ctx.window.maxTransferS * 1000;
  const elapsedMs = t.endMs - t.startMs;
  const late = t.open ? elapsedMs - ctx.allowanceMs > maxMs : elapsedMs > maxMs;
  const findings: ProcessWindowFinding[] = [];
  if (late) {
    findings.push({
      rule: 'transfer-time',
      // A slow transfer lets ferrite/pearlite or upper bainite form before the quench (practice.md §2.5).
      severity: 'CRITICAL',
      dedupKey: dedupKeyFor(ctx.batchId, 'transfer-time'),
      channelId: null,
      message: t.open
        ? `Transfer too long: load left the furnace at ${ctx.clock(t.startMs)} and is not recorded in the bath after ${fmtS(elapsedMs)} (maximum ${ctx.window.maxTransferS} s)`
        : `Transfer too long: ${fmtS(elapsedMs)} from furnace to bath (maximum ${ctx.window.maxTransferS} s)`,
      details: { transferS: elapsedMs / 1000, maxTransferS: ctx.window.maxTransferS, stillInTransfer: t.open },
    });
  }
  return { findings, transferMs: t.open ? null : elapsedMs };
}

/**
 * Time in the bath (INTO_BATH to OUT_OF_BATH). Too short leaves untransformed austenite that turns to
 * fresh martensite on cooling; too long risks ADI Stage II carbides (practice.md §2.2, §2.5). A hold still
 * running is never 'hold-min'; it is 'hold-max' once it is certainly over the maximum.
 */
export function evaluateHold(ctx: RuleContext): { findings: ProcessWindowFinding[]; holdMs: number | null } {
  const b = ctx.bath;
  if (!b) return { findings: [], holdMs: null };
  const { minHoldMin, maxHoldMin } = ctx.window.bath;
  const holdMs = b.endMs - b.startMs;
  const findings: ProcessWindowFinding[] = [];
  if (!b.open && holdMs < minHoldMin * 60_000) {
    findings.push({
      rule: 'hold-min',
      severity: 'CRITICAL',
      dedupKey: dedupKeyFor(ctx.batchId, 'hold-min'),
      channelId: null,
      message: `Bath hold too short: ${fmtMin(holdMs)} in the bath (minimum ${minHoldMin} min)`,
      details: { holdMin: holdMs / 60_000, minHoldMin },
    });
  }
  const overMs = b.open ? holdMs - ctx.allowanceMs : holdMs;
  if (overMs > maxHoldMin * 60_000) {
    findings.push({
      rule: 'hold-max',
      severity: 'MAJOR',
      dedupKey: dedupKeyFor(ctx.batchId, 'hold-max'),
      channelId: null,
      message: b.open
        ? `Bath hold too long: load still in the bath after ${fmtMin(holdMs)} (maximum ${maxHoldMin} min)`
        : `Bath hold too long: ${fmtMin(holdMs)} in the bath (maximum ${maxHoldMin} min)`,
      details: { holdMin: holdMs / 60_000, maxHoldMin, stillInBath: b.open },
    });
  }
  return { findings, holdMs };
}
