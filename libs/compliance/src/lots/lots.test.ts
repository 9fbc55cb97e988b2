import { describe, expect, it } from 'vitest';
import type { ProcessWindow } from '@ausline/contracts';
import { DRIFT_METRIC_NAMES, DriftChartsSettings } from '@ausline/contracts';
import { DRIFT_METRICS } from '../drift/config.js';
import { createSeededRandom } from '../drift/random.js';
import { chartDrift, decideLimits, driftDedupKey, resolveDriftSettings, type ChartLot, type StoredLimits } from './drift-chart.js';
import { driftFinding } from './drift-finding.js';
import { LotKeyError, lotKeyOf, parseLotKey, plantDate } from './lot-key.js';
import { driftSpecLimits, measuredHardnessDriftValue, predictedDriftValues } from './metric-values.js';
import { processRecord, temperatureStats } from './process-record.js';

describe('lot keys', () => {
  it('round-trips codes with any characters, and names the broken part', () => {
    const key = lotKeyOf({ specCode: 'AS60:CLIP/2', heatNumber: 'H 24%117', date: '2026-03-01' });
    expect(key).toBe('AS60%3ACLIP%2F2:H%2024%25117:2026-03-01');
    expect(parseLotKey(key)).toEqual({ specCode: 'AS60:CLIP/2', heatNumber: 'H 24%117', date: '2026-03-01' });
    expect(lotKeyOf({ specCode: 'AS60-CLIP', heatNumber: 'H24117', date: '2026-03-01' })).toBe('AS60-CLIP:H24117:2026-03-01');
    expect(() => parseLotKey('A:B')).toThrow(LotKeyError);
    expect(() => parseLotKey('A:B:2026-02-30')).toThrow(/calendar date/);
    expect(() => parseLotKey(':B:2026-02-03')).toThrow(/spec code is empty/);
    expect(() => parseLotKey('A:%E0%A4%A:2026-02-03')).toThrow(/percent-encoded/);
  });

  it('takes the plant date in the line time zone', () => {
    // 2026-03-01T23:30Z is already 2 March in Berlin (UTC+1 in winter) and still 1 March in Chicago.
    const t = Date.parse('2026-03-01T23:30:00Z');
    expect(plantDate(t, 'Europe/Berlin')).toBe('2026-03-02');
    expect(plantDate(t, 'America/Chicago')).toBe('2026-03-01');
    expect(plantDate(t, 'UTC')).toBe('2026-03-01');
  });
});

const window: ProcessWindow = {
  austenitize: { minTempC: 890, maxTempC: 910, minMinutes: 30 },
  maxTransferS: 20,
  bath: { minTempC: 360, maxTempC: 380, maxExcursionS: 120, minHoldMin: 60, maxHoldMin: 120 },
  maxChannelGapS: 30,
  flatline: { minDurationS: 600, epsilonC: 0.05 },
  plausible: { minTempC: 0, maxTempC: 1200, maxRateCPerS: 50 },
  twinTolerance: { maxDiffC: 8, minDurationS: 60 },
};

describe('process record', () => {
  it('time-weighted mean with sample-and-hold, no time beyond the allowed gap, min/max of readings', () => {
    // Readings at 0 s (360), 10 s (370), 20 s (380) and after a 60 s hole at 80 s (390), window 0–100 s, gap 30 s:
    // 360·10 + 370·10 + 380·30 (held until the gap ends) + 390·20 over 70 s covered.
    const ch = { channelId: 'a', code: 'tc1', role: 'bath-tc' as const, samples: [0, 10, 20, 80].map((s, i) => ({ tMs: s * 1000, valueC: 360 + 10 * i })) };
    const stats = temperatureStats([ch], 0, 100_000, 30)!;
    expect(stats.meanC).toBeCloseTo((360 * 10 + 370 * 10 + 380 * 30 + 390 * 20) / 70, 9);
    expect(stats.minC).toBe(360);
    expect(stats.maxC).toBe(390);
    expect(stats.coverage).toBeCloseTo(0.7, 9);
    expect(temperatureStats([ch], 200_000, 300_000, 30)).toBeNull();
  });

  it('states the austenitize over the soak, the transfer, the bath of the load only', () => {
    const MIN = 60_000;
    const charged = 0;
    const out = 60 * MIN;
    const into = out + 12_000;
    const outBath = into + 90 * MIN;
    const series = (from: number, to: number, value: (t: number) => number) => {
      const s = [];
      for (let t = from; t <= to; t += 10_000) s.push({ tMs: t, valueC: value(t) });
      return s;
    };
    const channels = [
      { channelId: 'z1', code: 'zone1', role: 'furnace-zone' as const, samples: series(charged, out, (t) => (t < 20 * MIN ? 700 + t / (20 * MIN) * 200 : 901)) },
      { channelId: 'z2', code: 'zone2', role: 'furnace-zone' as const, samples: series(charged, out, (t) => (t < 20 * MIN ? 700 + t / (20 * MIN) * 200 : 899)) },
      { channelId: 'b2', code: 'tc1', role: 'bath-tc' as const, samples: series(into, outBath, () => 371) },
      { channelId: 'b3', code: 'tc1', role: 'bath-tc' as const, samples: series(into, outBath, () => 250) },
    ];
    const rec = processRecord({ batchId: 'x', window, events: { chargedMs: charged, outOfFurnaceMs: out, intoBathMs: into, outOfBathMs: outBath }, channels, bathChannelIds: ['b2'], nowMs: outBath + MIN });
    expect(rec.phase).toBe('DONE');
    expect(rec.austenitize.over).toBe('soak');
    // The ramp 700 → 900 °C over 20 min passes the 890 °C minimum at 19 min, so the soak is the last 41 min.
    expect(rec.austenitize.soakMin).toBeCloseTo(41, 1);
    expect(rec.austenitize.tempC!.meanC).toBeCloseTo(900, 0); // 901 and 899 zones, plus the last minute of the ramp
    expect(rec.austenitize.tempC!.minC).toBeGreaterThanOrEqual(890);
    expect(rec.transfer).toEqual({ seconds: 12, maxS: 20, withinLimit: true });
    expect(rec.bath.holdMin).toBe(90);
    expect(rec.bath.tempC).toMatchObject({ meanC: 371, minC: 371, maxC: 371, channels: 1 });
    expect(rec.events.intoBathAt).toBe(new Date(into).toISOString());
  });
});

describe('metric values', () => {
  const result = {
    bands: { ceilingFraction: { p05: 0.6, p50: 0.72, p95: 0.8 }, blockyAustenite: { p05: 0.04, p50: 0.06, p95: 0.09 }, hardnessHV: { p05: 480, p50: 513, p95: 560 } },
  };
  it('margins against the spec, hardness in the spec scale by E140', () => {
    const ctx = { acceptance: { minBainiteFraction: 0.6, maxBlockyAusteniteFraction: 0.1, hardness: { scale: 'HRC' as const, min: 45, max: 55 } }, processWindow: window };
    const v = predictedDriftValues(result, ctx);
    expect(v['bainite-ceiling-margin']!.value).toBeCloseTo(0.12, 12);
    expect(v['blocky-austenite-margin']!.value).toBeCloseTo(0.04, 12);
    // E140 row: 513 HV = HRC 50 (metallurgy.md §6.4 [F2]).
    expect(v['predicted-hardness-p50']!.value).toBeCloseTo(50, 9);
    expect(driftSpecLimits('measured-hardness', ctx)).toEqual({ lower: 45, upper: 55 });
    expect(driftSpecLimits('bath-mean-temp-hold', ctx)).toEqual({ lower: 360, upper: 380 });
    const m = measuredHardnessDriftValue(
      [
        { id: 'a', kind: 'HARDNESS', scale: 'HV', values: { readings: [513, 513] } },
        { id: 'b', kind: 'HARDNESS', scale: 'HRC', values: { readings: [55] } },
        { id: 'c', kind: 'TENSILE', scale: null, values: { rmMPa: 1 } },
      ],
      ctx,
    )!;
    expect(m.value).toBeCloseTo((50 + 50 + 55) / 3, 9);
    const noBlocky = predictedDriftValues(result, { acceptance: {}, processWindow: null });
    expect(noBlocky['blocky-austenite-margin']).toBeUndefined();
    expect(noBlocky['predicted-hardness-p50']!.value).toBe(513);
  });
});

describe('drift chart settings and limits', () => {
  it('the contract and the library list the same metrics; settings errors name the field', () => {
    expect([...DRIFT_METRIC_NAMES]).toEqual([...DRIFT_METRICS]);
    const bad = DriftChartsSettings.safeParse({ charts: { ewma: { lambda: 2 } }, metrics: { 'measured-hardness': { charts: { cusum: { h: 4, headStart: 5 } } } } });
    expect(bad.success).toBe(false);
    const paths = bad.error!.issues.map((i) => i.path.join('.'));
    expect(paths).toContain('charts.ewma.lambda');
    expect(paths).toContain('metrics.measured-hardness.charts.cusum.headStart');
    expect(DriftChartsSettings.safeParse({ metrics: { nonsense: {} } }).success).toBe(false);
  });

  it('collects Phase I, estimates once and keeps the limits frozen; specified limits version up when they change', () => {
    const settings = resolveDriftSettings({ phaseILots: 20 });
    const rng = createSeededRandom(7);
    const lots: ChartLot[] = Array.from({ length: 30 }, (_, i) => ({ lotId: `L${i}`, batchId: `b${i}`, value: 370 + rng.nextNormal() }));
    const m = settings.metrics['bath-mean-temp-hold'];
    expect(decideLimits(null, lots.slice(0, 12), m, settings)).toEqual({ kind: 'collecting', have: 12, need: 20 });
    const d = decideLimits(null, lots, m, settings);
    expect(d.kind).toBe('new');
    if (d.kind !== 'new') return;
    expect(d.source).toBe('phase-i');
    expect(d.limits.version).toBe(1);
    const basisIds = [...d.limits.basis!.lotIds, ...d.limits.basis!.excluded.map((e) => e.lotId)].sort();
    expect(basisIds).toEqual(lots.slice(0, 20).map((l) => l.lotId).sort());
    const stored: StoredLimits = { version: 1, source: 'phase-i', limits: d.limits };
    expect(decideLimits(stored, [...lots, { lotId: 'X', batchId: 'x', value: 999 }], m, settings)).toEqual({ kind: 'keep' });
    const spec = resolveDriftSettings({ metrics: { 'bath-mean-temp-hold': { limits: { centre: 370, sigma: 1.2 } } } });
    const s1 = decideLimits(stored, lots, spec.metrics['bath-mean-temp-hold'], spec);
    expect(s1).toMatchObject({ kind: 'new', source: 'specified' });
    if (s1.kind !== 'new') return;
    expect(s1.limits.version).toBe(2);
    expect(decideLimits({ version: 2, source: 'specified', limits: s1.limits }, lots, spec.metrics['bath-mean-temp-hold'], spec)).toEqual({ kind: 'keep' });
  });
});

describe('chartDrift episodes', () => {
  const settings = resolveDriftSettings({ metrics: { 'bath-mean-temp-hold': { limits: { centre: 370, sigma: 1 } } } });
  const limits: StoredLimits = { version: 1, source: 'specified', limits: { ...decideLimitsSpecified() } };
  function decideLimitsSpecified() {
    const d = decideLimits(null, [], settings.metrics['bath-mean-temp-hold'], settings);
    if (d.kind !== 'new') throw new Error('expected limits');
    return d.limits;
  }

  it('a planted shift makes one episode with its onset evidence, before any lot breaks the spec band', () => {
    const rng = createSeededRandom(20261201);
    const lots: ChartLot[] = Array.from({ length: 60 }, (_, i) => ({ lotId: `L${i + 1}`, batchId: `b${i + 1}`, value: 370 + rng.nextNormal() + (i >= 30 ? 1.5 : 0) }));
    const chart = chartDrift({ product: 'P', line: 'L', metric: 'bath-mean-temp-hold', lots, limits, settings, specLimits: { lower: 364, upper: 376 } });
    expect(chart.phaseI).toEqual([]);
    expect(chart.episodes).toHaveLength(1);
    const e = chart.episodes[0]!;
    expect(e.startIndex).toBeGreaterThanOrEqual(30);
    expect(e.ongoing).toBe(true);
    expect(e.direction).toBe('up');
    expect(e.evidence.points.at(-1)!.lotId).toBe(e.startLotId);
    expect(chart.evaluation.firstSpecBreach).toBeNull();
    const f = driftFinding(e, { productSpecId: 's', lineId: 'l', specCode: 'P', lineCode: 'L', metric: 'bath-mean-temp-hold', unit: '°C', limitsVersion: 1, evaluation: chart.evaluation });
    expect(f.dedupKey).toBe(driftDedupKey('s', 'l', 'bath-mean-temp-hold', 1, e.startBatchId));
    expect(f.severity).toBe('MAJOR');
    expect(f.message).toMatch(/drifting up from lot L\d+/);
    expect(f.message).toMatch(/no lot beyond a spec limit/);
    console.log(`planted +1.5σ at lot 31: episode from lot ${e.startLotId} (${e.keys.join(', ')}); ${f.message}`);
  });

  it('an episode ends after the gap of quiet lots; the next signal opens a new one; good-way signals raise nothing', () => {
    const values = [...Array(10).fill(370), 374, 374, ...Array(10).fill(370), 365, 365, ...Array(25).fill(370)];
    const lots: ChartLot[] = values.map((v, i) => ({ lotId: `L${i + 1}`, batchId: `b${i + 1}`, value: v }));
    const chart = chartDrift({ product: 'P', line: 'L', metric: 'bath-mean-temp-hold', lots, limits, settings, specLimits: null });
    expect(chart.episodes.map((e) => [e.startLotId, e.direction, e.ongoing])).toEqual([
      ['L11', 'up', false],
      ['L23', 'down', false],
    ]);
    // For a margin only a fall is adverse: the same series on a margin raises only the downward episode.
    const margin = resolveDriftSettings({ metrics: { 'bainite-ceiling-margin': { limits: { centre: 370, sigma: 1 } } } });
    const m = chartDrift({ product: 'P', line: 'L', metric: 'bainite-ceiling-margin', lots, limits, settings: margin, specLimits: null });
    expect(m.episodes.map((e) => e.startLotId)).toEqual(['L23']);
  });
});
