import type { AcceptanceCriteria, ProcessWindow } from '@ausline/contracts';
import type { TemperatureChannelSeries } from '../process-window/types.js';
import type { BatchPredictionInput } from './batch-prediction.js';

/** Invented records of one austempered load for the predictive unit tests (no plant, no product of anyone's). */
export const WINDOW: ProcessWindow = {
  austenitize: { minTempC: 880, maxTempC: 910, minMinutes: 20, maxMinutes: 120 },
  maxTransferS: 20,
  bath: { minTempC: 320, maxTempC: 340, maxExcursionS: 180, minHoldMin: 45, maxHoldMin: 120 },
  maxChannelGapS: 30,
  flatline: { minDurationS: 600, epsilonC: 0.05 },
  plausible: { minTempC: 0, maxTempC: 1100, maxRateCPerS: 20 },
  twinTolerance: { maxDiffC: 4, minDurationS: 120 },
};

/** An invented Si–Mn–Cr–Mo bolt steel (not a standard grade). */
export const BOLT_STEEL = { C: 0.45, Si: 1.5, Mn: 1.4, Cr: 0.5, Mo: 0.25, P: 0.01, S: 0.008 };

export const T0 = Date.UTC(2026, 11, 1, 6, 0, 0);
const MIN = 60_000;

export interface LoadOptions {
  bathC?: number;
  holdMin?: number;
  /** Only readings up to this many minutes after INTO_BATH exist (load still in the bath when set). */
  loggedMin?: number;
  scheduledHoldMin?: number | null;
  criteria?: AcceptanceCriteria;
  samples?: number;
  sizeMm?: number;
  chemistry?: Record<string, number>;
  stepS?: number;
}

export function loadRecords(o: LoadOptions = {}): BatchPredictionInput {
  const bathC = o.bathC ?? 330;
  const holdMin = o.holdMin ?? 60;
  const charged = T0;
  const outOfFurnace = charged + 50 * MIN;
  const intoBath = outOfFurnace + 8_000;
  const outOfBath = intoBath + holdMin * MIN;
  const loggedUntil = o.loggedMin === undefined ? outOfBath : intoBath + o.loggedMin * MIN;
  const stepMs = (o.stepS ?? 10) * 1000;
  const zones: TemperatureChannelSeries[] = ['z1', 'z2'].map((code, z) => ({
    channelId: `00000000-0000-4000-8000-00000000000${z + 1}`,
    code,
    role: 'furnace-zone' as const,
    samples: Array.from({ length: Math.floor((outOfFurnace - charged) / 10_000) + 1 }, (_, i) => {
      const t = charged + i * 10_000;
      const since = t - charged;
      return { tMs: t, valueC: (since < 15 * MIN ? 700 + (200 * since) / (15 * MIN) : 900) + (z ? 0.4 : -0.3) };
    }),
  }));
  const tcs: TemperatureChannelSeries[] = ['tc1', 'tc2'].map((code, k) => {
    const samples: { tMs: number; valueC: number }[] = [];
    for (let t = intoBath - 20_000, i = 0; t <= Math.min(loggedUntil, outOfBath); t += stepMs, i++) {
      const since = (t - intoBath) / 1000;
      const rise = since > 0 ? 4 * Math.exp(-since / 240) : 0; // the load's heat lifts the bath a little, recovering in minutes
      samples.push({ tMs: t, valueC: bathC + rise + 0.3 * Math.sin(i * 0.37 + k) + (k ? 0.2 : -0.2) });
    }
    return { channelId: `00000000-0000-4000-8000-0000000000a${k + 1}`, code, role: 'bath-tc' as const, samples };
  });
  return {
    batchId: '00000000-0000-4000-8000-0000000000b1',
    heatId: '00000000-0000-4000-8000-0000000000c1',
    heatRevision: 1,
    specVersionId: '00000000-0000-4000-8000-0000000000d1',
    scheduledHoldMin: o.scheduledHoldMin === undefined ? holdMin : o.scheduledHoldMin,
    heat: { material: 'STEEL', chemistryWtPct: o.chemistry ?? BOLT_STEEL },
    section: { shape: 'CYLINDER', sizeMm: o.sizeMm ?? 8 },
    window: WINDOW,
    criteria: o.criteria ?? { requireCompleteTransformation: true, minBainiteFraction: 0.3, hardness: { scale: 'HRC', min: 40, max: 60 } },
    events: {
      chargedMs: charged,
      outOfFurnaceMs: outOfFurnace,
      intoBathMs: intoBath,
      ...(o.loggedMin === undefined ? { outOfBathMs: outOfBath } : {}),
    },
    channels: [...zones, ...tcs],
    agitatorRpm: [{ tMs: intoBath, value: 900 }],
    lineHeatTransfer: { still: 700, normal: 1400, high: 2000 },
    uncertainty: { samples: o.samples ?? 40, seed: 1 },
  };
}

/** The records as they stood when only readings up to `minutes` after INTO_BATH had arrived. */
export function truncated(full: BatchPredictionInput, minutes: number, outOfBath = false): BatchPredictionInput {
  const into = full.events.intoBathMs as number;
  const limit = into + minutes * MIN;
  return {
    ...full,
    events: outOfBath ? full.events : { chargedMs: full.events.chargedMs, outOfFurnaceMs: full.events.outOfFurnaceMs, intoBathMs: into },
    channels: full.channels.map((c) => (c.role === 'bath-tc' ? { ...c, samples: c.samples.filter((s) => s.tMs <= limit) } : c)),
  };
}
