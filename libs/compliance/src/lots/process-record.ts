// The process a batch actually ran, as a certificate states it (practice.md §3.3: actual austenitize
// temperature and time, salt temperature range and time, transfer within limit) and as the drift chart
// of the bath temperature charts it (one value per load, practice.md §4.1).
//
// Readings are sample-and-hold (a reading stands until the next one) but never longer than the allowed
// channel gap: beyond it the temperature is unknown and the time is left out of the mean, exactly as the
// process-window rules read a log (libs/compliance README, "How readings are read"). The mean is
// time-weighted; min and max are over the readings taken inside the step (plus the reading in force at
// its start). Duplicated times keep the last given value.

import type { ProcessWindow } from '@ausline/contracts';
import { evaluateProcessWindow } from '../process-window/evaluate.js';
import type { LoadEventTimes, TemperatureChannelSeries } from '../process-window/types.js';

export interface TemperatureStats {
  /** Time-weighted mean over the covered time of all channels, °C. */
  meanC: number;
  minC: number;
  maxC: number;
  /** Covered (known) time / (window length × channels), 0..1. */
  coverage: number;
  channels: number;
  readings: number;
}

function sortedSamples(samples: TemperatureChannelSeries['samples']): { tMs: number; valueC: number }[] {
  const byTime = new Map<number, number>();
  for (const s of samples) if (Number.isFinite(s.tMs) && Number.isFinite(s.valueC)) byTime.set(s.tMs, s.valueC);
  return [...byTime.entries()].sort((a, b) => a[0] - b[0]).map(([tMs, valueC]) => ({ tMs, valueC }));
}

/**
 * Time-weighted statistics of the given channels over [fromMs, toMs]; null when no reading covers any of
 * that time.
 */
export function temperatureStats(channels: readonly TemperatureChannelSeries[], fromMs: number, toMs: number, maxGapS: number): TemperatureStats | null {
  if (!(toMs > fromMs)) return null;
  const maxGapMs = maxGapS * 1000;
  let weighted = 0;
  let covered = 0;
  let min = Number.POSITIVE_INFINITY;
  let max = Number.NEGATIVE_INFINITY;
  let readings = 0;
  let used = 0;
  for (const c of channels) {
    const s = sortedSamples(c.samples);
    let usedHere = false;
    for (let i = 0; i < s.length; i++) {
      const start = s[i].tMs;
      if (start > toMs) break;
      const next = i + 1 < s.length ? s[i + 1].tMs : Number.POSITIVE_INFINITY;
      const holdEnd = Math.min(next, start + maxGapMs, toMs);
      const a = Math.max(start, fromMs);
      if (holdEnd <= a && !(start >= fromMs && start <= toMs)) continue;
      // A reading inside the window always counts for min/max; one before it only if it is still in force.
      if (start >= fromMs || holdEnd > fromMs) {
        min = Math.min(min, s[i].valueC);
        max = Math.max(max, s[i].valueC);
        readings++;
        usedHere = true;
      }
      if (holdEnd > a) {
        weighted += s[i].valueC * (holdEnd - a);
        covered += holdEnd - a;
      }
    }
    if (usedHere) used++;
  }
  if (covered <= 0 || readings === 0) return null;
  return { meanC: weighted / covered, minC: min, maxC: max, coverage: covered / ((toMs - fromMs) * Math.max(1, channels.length)), channels: used, readings };
}

export interface ProcessRecord {
  events: { chargedAt: string | null; outOfFurnaceAt: string | null; intoBathAt: string | null; outOfBathAt: string | null };
  austenitize: {
    /** Longest continuous soak with every zone at or above the window's minimum (process-window measure). */
    soakMin: number | null;
    /** Zone temperatures over the soak (the last soakMin minutes before OUT_OF_FURNACE), else over the whole furnace step. */
    over: 'soak' | 'furnace-step' | null;
    tempC: TemperatureStats | null;
    /** Furnace step CHARGED → OUT_OF_FURNACE, minutes. */
    inFurnaceMin: number | null;
  };
  transfer: { seconds: number | null; maxS: number | null; withinLimit: boolean | null };
  bath: {
    holdMin: number | null;
    tempC: TemperatureStats | null;
    window: { minTempC: number; maxTempC: number; minHoldMin: number; maxHoldMin: number } | null;
  };
  /** 'DONE' once OUT_OF_BATH is logged; otherwise the step the load is in. */
  phase: 'NOT_STARTED' | 'IN_FURNACE' | 'IN_TRANSFER' | 'IN_BATH' | 'DONE';
}

export interface ProcessRecordInput {
  batchId: string;
  window: ProcessWindow;
  events: LoadEventTimes;
  /** Furnace zones and bath thermocouples of the line (as the recompute loads them). */
  channels: readonly TemperatureChannelSeries[];
  /** Bath thermocouples of the bath the load went into; when given, other baths' channels are ignored. */
  bathChannelIds?: readonly string[] | null;
  nowMs: number;
}

const iso = (ms: number | undefined) => (ms === undefined ? null : new Date(ms).toISOString());
const round = (x: number | null, digits: number) => (x === null ? null : Math.round(x * 10 ** digits) / 10 ** digits);

function roundStats(s: TemperatureStats | null): TemperatureStats | null {
  if (!s) return null;
  return { meanC: round(s.meanC, 2)!, minC: round(s.minC, 2)!, maxC: round(s.maxC, 2)!, coverage: round(s.coverage, 4)!, channels: s.channels, readings: s.readings };
}

/** What the batch actually ran, from its load events and logs (pure; the same inputs give the same record). */
export function processRecord(input: ProcessRecordInput): ProcessRecord {
  const e = input.events;
  const bathIds = input.bathChannelIds ? new Set(input.bathChannelIds) : null;
  const zones = input.channels.filter((c) => c.role === 'furnace-zone');
  const baths = input.channels.filter((c) => c.role === 'bath-tc' && (!bathIds || bathIds.has(c.channelId)));
  const pw = evaluateProcessWindow({ batchId: input.batchId, window: input.window, events: e, channels: [...zones, ...baths], nowMs: input.nowMs });
  const gapS = input.window.maxChannelGapS;

  let austenitizeTemp: TemperatureStats | null = null;
  let over: ProcessRecord['austenitize']['over'] = null;
  if (e.outOfFurnaceMs !== undefined) {
    const soak = pw.measures.soakMin;
    if (soak !== null && soak > 0) {
      austenitizeTemp = temperatureStats(zones, e.outOfFurnaceMs - soak * 60_000, e.outOfFurnaceMs, gapS);
      over = austenitizeTemp ? 'soak' : null;
    }
    if (!austenitizeTemp && e.chargedMs !== undefined) {
      austenitizeTemp = temperatureStats(zones, e.chargedMs, e.outOfFurnaceMs, gapS);
      over = austenitizeTemp ? 'furnace-step' : null;
    }
  }
  const bathTemp = e.intoBathMs !== undefined && e.outOfBathMs !== undefined ? temperatureStats(baths, e.intoBathMs, e.outOfBathMs, gapS) : null;
  const transferS = pw.measures.transferS;
  const bw = input.window.bath;
  return {
    events: { chargedAt: iso(e.chargedMs), outOfFurnaceAt: iso(e.outOfFurnaceMs), intoBathAt: iso(e.intoBathMs), outOfBathAt: iso(e.outOfBathMs) },
    austenitize: {
      soakMin: round(pw.measures.soakMin, 2),
      over,
      tempC: roundStats(austenitizeTemp),
      inFurnaceMin: e.chargedMs !== undefined && e.outOfFurnaceMs !== undefined ? round((e.outOfFurnaceMs - e.chargedMs) / 60_000, 2) : null,
    },
    transfer: { seconds: round(transferS, 1), maxS: input.window.maxTransferS, withinLimit: transferS === null ? null : transferS <= input.window.maxTransferS },
    bath: {
      holdMin: round(pw.measures.holdMin, 2),
      tempC: roundStats(bathTemp),
      window: { minTempC: bw.minTempC, maxTempC: bw.maxTempC, minHoldMin: bw.minHoldMin, maxHoldMin: bw.maxHoldMin },
    },
    phase: pw.measures.phase,
  };
}
