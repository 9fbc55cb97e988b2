import type { BatchDetail, ChannelSummary, ProcessWindow } from '../api/types.js';
import { fractionAt, readPrediction, verdictOf, type PredictionView, type VerdictLevel } from './prediction.js';

/**
 * What a screen says about one load right now, derived from GET /v1/batches/:id, its spec version's
 * process window and the clock. Pure (the clock is a parameter) so the board and the batch view say
 * the same thing and tests can pin the time.
 */

export interface Reading {
  channelCode: string;
  equipmentCode: string;
  valueC: number;
  atMs: number;
  ageMs: number;
  /** Relative to the band that applies to this equipment; null when no band is known. */
  band: 'inside' | 'above' | 'below' | null;
  /** No reading for longer than the spec's largest allowed gap (or 2 min without a spec). */
  stale: boolean;
}

export interface StaleNote {
  kind: 'recompute-pending' | 'prediction-behind' | 'readings-stale';
  text: string;
  /** When the condition began, if known (the view adds it in the plant's time). */
  sinceMs?: number;
}

export interface BatchState {
  step: 'planned' | 'furnace' | 'transfer' | 'bath' | 'done';
  /** When the current step began (CHARGED, OUT_OF_FURNACE, INTO_BATH, OUT_OF_BATH). */
  stepSinceMs: number | null;
  intoBathMs: number | null;
  outOfBathMs: number | null;
  /** Time in bath so far (or in total once out). */
  holdMs: number | null;
  /** INTO_BATH + scheduledHoldMin. */
  scheduledEndMs: number | null;
  bathReadings: Reading[];
  furnaceReadings: Reading[];
  prediction: PredictionView | null;
  verdict: VerdictLevel | null;
  /** Bainite fraction at now (in bath) or at the end, from the predicted curve. */
  bainiteNow: number | null;
  ceiling: number | null;
  earliestSafeEndMs: number | null;
  /** Scheduled end falls before the earliest safe end: the load would leave too early. */
  scheduledTooEarly: boolean;
  stale: StaleNote[];
}

const at = (d: BatchDetail, kind: string): number | null => {
  const e = d.events.find((x) => x.kind === kind);
  return e ? Date.parse(e.at) : null;
};

function readings(summary: ChannelSummary[], kind: 'BATH' | 'FURNACE', band: { min: number; max: number } | null, maxAgeMs: number, nowMs: number): Reading[] {
  return summary
    .filter((c) => c.equipmentKind === kind && c.quantity === 'TEMPERATURE_C' && c.last !== null)
    .filter((c) => (kind === 'BATH' ? c.role === 'BATH_TC' || c.role === 'OTHER' : c.role === 'FURNACE_ZONE' || c.role === 'LOAD_TC'))
    .map((c) => {
      const atMs = Date.parse(c.last!.t);
      const valueC = c.last!.value;
      return {
        channelCode: c.channelCode,
        equipmentCode: c.equipmentCode,
        valueC,
        atMs,
        ageMs: nowMs - atMs,
        band: band ? (valueC > band.max ? 'above' : valueC < band.min ? 'below' : 'inside') : null,
        stale: nowMs - atMs > maxAgeMs,
      } satisfies Reading;
    });
}

export function batchState(d: BatchDetail, window: ProcessWindow | null, nowMs: number): BatchState {
  const charged = at(d, 'CHARGED');
  const outFurnace = at(d, 'OUT_OF_FURNACE');
  const intoBath = at(d, 'INTO_BATH');
  const outBath = at(d, 'OUT_OF_BATH');
  const step: BatchState['step'] =
    outBath !== null ? 'done' : intoBath !== null ? 'bath' : outFurnace !== null ? 'transfer' : charged !== null ? 'furnace' : 'planned';
  const stepSinceMs = { planned: null, furnace: charged, transfer: outFurnace, bath: intoBath, done: outBath }[step];
  const holdMs = intoBath !== null ? (outBath ?? nowMs) - intoBath : null;
  const scheduledEndMs = intoBath !== null && d.scheduledHoldMin !== null ? intoBath + d.scheduledHoldMin * 60_000 : null;

  const maxAgeMs = Math.max(30_000, (window?.maxChannelGapS ?? 120) * 1000);
  const live = step !== 'done' && step !== 'planned';
  const bathBand = window ? { min: window.bath.minTempC, max: window.bath.maxTempC } : null;
  const furnaceBand = window ? { min: window.austenitize.minTempC, max: window.austenitize.maxTempC } : null;
  const bathReadings = readings(d.samplesSummary, 'BATH', bathBand, live ? maxAgeMs : Number.POSITIVE_INFINITY, nowMs);
  const furnaceReadings = readings(d.samplesSummary, 'FURNACE', furnaceBand, live ? maxAgeMs : Number.POSITIVE_INFINITY, nowMs);

  const prediction = readPrediction(d.latestPrediction);
  const verdict = prediction ? verdictOf(prediction) : null;
  let bainiteNow: number | null = null;
  if (prediction && intoBath !== null) {
    const tS = ((outBath ?? nowMs) - intoBath) / 1000;
    bainiteNow = fractionAt(prediction.bainite.curve, tS);
    if (outBath !== null && prediction.bainite.fractionAtEnd !== null) bainiteNow = prediction.bainite.fractionAtEnd;
  }
  const earliestSafeEndMs = prediction?.hold.earliestSafeEndMs ?? null;
  const scheduledTooEarly = scheduledEndMs !== null && earliestSafeEndMs !== null && scheduledEndMs < earliestSafeEndMs;

  const stale: StaleNote[] = [];
  if (d.stale) {
    const sinceMs = d.staleSince ? Date.parse(d.staleSince) : Number.NaN;
    stale.push({
      kind: 'recompute-pending',
      text: 'Recompute pending: the work queue was unreachable, so the figures below wait for the worker',
      ...(Number.isFinite(sinceMs) ? { sinceMs } : {}),
    });
  }
  const lastSampleMs = Math.max(0, ...d.samplesSummary.map((c) => (c.last ? Date.parse(c.last.t) : 0)));
  if (prediction?.watermarkMs != null && lastSampleMs - prediction.watermarkMs > 120_000) {
    stale.push({ kind: 'prediction-behind', text: `Prediction is ${Math.round((lastSampleMs - prediction.watermarkMs) / 60_000)} min behind the latest readings` });
  }
  if (live) {
    const relevant = step === 'bath' ? bathReadings : step === 'furnace' ? furnaceReadings : [];
    const old = relevant.filter((r) => r.stale);
    if (old.length > 0) {
      stale.push({ kind: 'readings-stale', text: `No reading from ${old.map((r) => r.channelCode).join(', ')} for ${Math.round(Math.max(...old.map((r) => r.ageMs)) / 1000)} s` });
    }
  }

  return {
    step,
    stepSinceMs,
    intoBathMs: intoBath,
    outOfBathMs: outBath,
    holdMs,
    scheduledEndMs,
    bathReadings,
    furnaceReadings,
    prediction,
    verdict,
    bainiteNow,
    ceiling: prediction?.bainite.ceilingFraction ?? null,
    earliestSafeEndMs,
    scheduledTooEarly,
    stale,
  };
}

/** The version's process window, if the spec list has it. */
export function windowOf(specs: ReadonlyArray<{ versions: ReadonlyArray<{ id: string; processWindow: ProcessWindow }> }>, versionId: string): ProcessWindow | null {
  for (const s of specs) for (const v of s.versions) if (v.id === versionId) return v.processWindow;
  return null;
}
