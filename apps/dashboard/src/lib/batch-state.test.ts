import { describe, expect, it } from 'vitest';
import type { BatchDetail, ProcessWindow } from '../api/types.js';
import { batchState } from './batch-state.js';

const window: ProcessWindow = {
  austenitize: { minTempC: 890, maxTempC: 910, minMinutes: 60 },
  maxTransferS: 20,
  bath: { minTempC: 360, maxTempC: 380, maxExcursionS: 120, minHoldMin: 60, maxHoldMin: 120 },
  maxChannelGapS: 30,
  flatline: { minDurationS: 600, epsilonC: 0.05 },
  plausible: { minTempC: 0, maxTempC: 1200, maxRateCPerS: 50 },
  twinTolerance: { maxDiffC: 8, minDurationS: 60 },
};

const T = Date.UTC(2026, 2, 1, 6, 0, 0);
const iso = (ms: number): string => new Date(ms).toISOString();

function detail(patch: Partial<BatchDetail> = {}): BatchDetail {
  return {
    id: 'b1', code: 'LOAD-1', lineId: 'l1', heatId: 'h1', specVersionId: 'v1', partCount: 48, weightKg: 420,
    sectionShape: 'CYLINDER', sectionSizeMm: 25, status: 'IN_BATH', scheduledHoldMin: 60, stale: false, staleSince: null,
    createdAt: iso(T), updatedAt: iso(T),
    line: { id: 'l1', code: 'L1', name: 'Line 1', timeZone: 'UTC' },
    heat: { id: 'h1', heatNumber: 'H1', material: 'STEEL', grade: null, revision: 1, chemistryWtPct: { C: 0.8 } },
    spec: { id: 's1', code: 'P1', name: 'Part', versionId: 'v1', version: 1, status: 'APPROVED' },
    events: [
      { id: 'e1', batchId: 'b1', kind: 'CHARGED', at: iso(T), equipmentId: 'f', equipmentCode: 'F1', receivedAt: iso(T) },
      { id: 'e2', batchId: 'b1', kind: 'OUT_OF_FURNACE', at: iso(T + 3_600_000), equipmentId: 'f', equipmentCode: 'F1', receivedAt: iso(T) },
      { id: 'e3', batchId: 'b1', kind: 'INTO_BATH', at: iso(T + 3_612_000), equipmentId: 'b', equipmentCode: 'B1', receivedAt: iso(T) },
    ],
    samplesWindow: null,
    samplesSummary: [
      { channelId: 'c1', channelCode: 'tc1', equipmentId: 'b', equipmentCode: 'B1', equipmentKind: 'BATH', quantity: 'TEMPERATURE_C', role: 'BATH_TC', count: 10, min: 360, max: 385, first: null, last: { t: iso(T + 3_612_000 + 600_000), value: 384 } },
      { channelId: 'c2', channelCode: 'tc2', equipmentId: 'b', equipmentCode: 'B1', equipmentKind: 'BATH', quantity: 'TEMPERATURE_C', role: 'BATH_TC', count: 10, min: 360, max: 372, first: null, last: { t: iso(T + 3_612_000 + 540_000), value: 371 } },
      { channelId: 'c3', channelCode: 'agit', equipmentId: 'b', equipmentCode: 'B1', equipmentKind: 'BATH', quantity: 'AGITATION_RPM', role: 'BATH_AGITATION', count: 10, min: 1, max: 1, first: null, last: { t: iso(T), value: 900 } },
    ],
    deviations: [],
    labResults: [],
    latestPrediction: null,
    ...patch,
  };
}

describe('batchState', () => {
  const now = T + 3_612_000 + 600_000; // 10 min in the bath

  it('says which step the load is in, since when, and the time in bath', () => {
    const s = batchState(detail(), window, now);
    expect(s.step).toBe('bath');
    expect(s.stepSinceMs).toBe(T + 3_612_000);
    expect(s.holdMs).toBe(600_000);
    expect(s.scheduledEndMs).toBe(T + 3_612_000 + 3_600_000);
  });

  it('reads the bath thermocouples against the bath band and flags a silent one', () => {
    const s = batchState(detail(), window, now);
    expect(s.bathReadings.map((r) => [r.channelCode, r.band, r.stale])).toEqual([
      ['tc1', 'above', false],
      ['tc2', 'inside', true], // 60 s without a reading, spec allows 30 s gaps
    ]);
    expect(s.stale.map((n) => n.kind)).toEqual(['readings-stale']);
  });

  it('without a prediction there is no verdict, no bainite figure and no safe end', () => {
    const s = batchState(detail(), window, now);
    expect(s.prediction).toBeNull();
    expect(s.verdict).toBeNull();
    expect(s.bainiteNow).toBeNull();
    expect(s.earliestSafeEndMs).toBeNull();
  });

  it('with a prediction: bainite now from the curve, and a scheduled end before the safe end is flagged', () => {
    const s = batchState(
      detail({
        latestPrediction: {
          id: 'p', batchId: 'b1', version: 2, modelVersion: 'm', watermark: iso(now), phase: 'IN_BATH', createdAt: iso(now),
          result: {
            bainite: { ceilingFraction: 0.8, fractionAtEnd: 0.78, timeTo95PctS: 4000, curve: [[0, 0], [1200, 0.4], [4000, 0.76]] },
            verdicts: [{ criterion: 'complete-transformation', verdict: 'nonconforming', message: 'incomplete' }],
            hold: { earliestSafeEndAt: iso(T + 3_612_000 + 4_000_000) },
          },
        },
      }),
      window,
      now,
    );
    expect(s.bainiteNow).toBeCloseTo(0.2);
    expect(s.ceiling).toBe(0.8);
    expect(s.verdict).toBe('nonconforming');
    expect(s.scheduledTooEarly).toBe(true);
  });

  it('a batch waiting for a recompute says so', () => {
    const s = batchState(detail({ stale: true, staleSince: iso(now - 60_000) }), window, now);
    expect(s.stale[0]).toMatchObject({ kind: 'recompute-pending', sinceMs: now - 60_000 });
  });
});
