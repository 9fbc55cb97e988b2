import type { ProcessWindow } from '@ausline/contracts';
import { normalizeSamples, plantClock } from './series.js';
import type { LoadEventTimes, ProcessWindowInput, TemperatureChannelRole, TemperatureSample } from './types.js';

/** The time a load spent in one step: [startMs, endMs]; open = still there at nowMs. */
export interface Phase {
  startMs: number;
  endMs: number;
  open: boolean;
}

export interface PreparedChannel {
  channelId: string;
  code: string;
  role: TemperatureChannelRole;
  /** Every reading, sorted: what the channel reported (gap and plausibility rules). */
  raw: TemperatureSample[];
  /** Readings inside the plausible range: what the temperature rules use. A reading that cannot be a
   *  temperature (open thermocouple, wiring fault) is reported by 'signal-implausible' and otherwise
   *  treated as no reading, so it does not also show up as a bath excursion or a soak break. */
  plausible: TemperatureSample[];
}

export interface RuleContext {
  batchId: string;
  window: ProcessWindow;
  events: LoadEventTimes;
  nowMs: number;
  allowanceMs: number;
  maxGapMs: number;
  furnace: Phase | null;
  transfer: Phase | null;
  bath: Phase | null;
  channels: PreparedChannel[];
  /** Formats an instant for a message, on the plant's clock (series.ts plantClock). */
  clock: (ms: number) => string;
}

export const DEFAULT_INGEST_LATENCY_ALLOWANCE_S = 60;

function phase(startMs: number | undefined, endMs: number | undefined, nowMs: number): Phase | null {
  if (startMs === undefined) return null;
  if (endMs !== undefined) return endMs >= startMs ? { startMs, endMs, open: false } : null;
  return { startMs, endMs: Math.max(startMs, nowMs), open: true };
}

export function prepareContext(input: ProcessWindowInput): RuleContext {
  const { window, events, nowMs } = input;
  const channels = [...input.channels]
    .sort((a, b) => (a.code < b.code ? -1 : a.code > b.code ? 1 : a.channelId < b.channelId ? -1 : 1))
    .map((c) => {
      const raw = normalizeSamples(c.samples);
      const plausible = raw.filter((s) => s.valueC >= window.plausible.minTempC && s.valueC <= window.plausible.maxTempC);
      return { channelId: c.channelId, code: c.code, role: c.role, raw, plausible };
    });
  return {
    batchId: input.batchId,
    window,
    events,
    nowMs,
    allowanceMs: (input.ingestLatencyAllowanceS ?? DEFAULT_INGEST_LATENCY_ALLOWANCE_S) * 1000,
    maxGapMs: window.maxChannelGapS * 1000,
    furnace: phase(events.chargedMs, events.outOfFurnaceMs, nowMs),
    transfer: phase(events.outOfFurnaceMs, events.intoBathMs, nowMs),
    bath: phase(events.intoBathMs, events.outOfBathMs, nowMs),
    channels,
    clock: plantClock(input.timeZone),
  };
}

/** The phase a channel's readings matter in: furnace zones while the load is in the furnace, bath
 *  thermocouples while it is in the bath. */
export function phaseOf(ctx: RuleContext, role: TemperatureChannelRole): Phase | null {
  return role === 'furnace-zone' ? ctx.furnace : ctx.bath;
}

export function roleLabel(role: TemperatureChannelRole): string {
  return role === 'furnace-zone' ? 'Furnace zone' : 'Bath thermocouple';
}
