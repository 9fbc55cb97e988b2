import { describe, expect, it } from 'vitest';
import { predict } from '@ausline/metallurgy';
import { engineBandCalibration, rawPredictedBand } from '../calibration/bands.js';
import { DEFAULT_MIN_RESULTS, startCalibration, summarizeCalibration, updateCalibration } from '../calibration/running.js';
import type { TemperatureChannelSeries } from '../process-window/types.js';
import { mergeBathChannels } from './bath-series.js';
import { buildBatchSetup, PredictionInputError } from './batch-setup.js';
import { predictBatch, type BatchPredictionOutcome, type PredictionState } from './batch-prediction.js';
import { canonicalJson, sha256Hex } from './digest.js';
import { loadRecords, truncated, T0, WINDOW } from './fixtures.test-support.js';

type Predicted = Extract<BatchPredictionOutcome, { kind: 'predicted' }>;
const predicted = (o: BatchPredictionOutcome): Predicted => {
  if (o.kind !== 'predicted') throw new Error(`not predicted: ${o.reason}`);
  return o;
};

describe('digest', () => {
  it('SHA-256 matches the FIPS 180-4 examples', () => {
    // FIPS 180-4 / NIST CSRC example values for "abc" and the empty string
    expect(sha256Hex('abc')).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
    expect(sha256Hex('')).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
    expect(sha256Hex('abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq')).toBe('248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1');
  });
  it('canonical JSON sorts keys and drops undefined', () => {
    expect(canonicalJson({ b: 1, a: [2, { d: undefined, c: 3 }] })).toBe('{"a":[2,{"c":3}],"b":1}');
  });
});

describe('bath series from the bath thermocouples', () => {
  const into = T0;
  const tc = (id: string, rows: Array<[number, number]>): TemperatureChannelSeries => ({
    channelId: id,
    code: id,
    role: 'bath-tc',
    samples: rows.map(([s, v]) => ({ tMs: into + s * 1000, valueC: v })),
  });
  const opts = { intoBathMs: into, maxGapS: 30, maxDiffC: 4, plausible: { minTempC: 0, maxTempC: 1100 } };

  it('means the agreeing thermocouples on a 10 s grid and interpolates between readings', () => {
    const s = mergeBathChannels([tc('a', [[0, 330], [20, 332]]), tc('b', [[0, 331], [20, 333]])], opts);
    expect(s.points).toEqual([[0, 330.5], [10, 331.5], [20, 332.5]]);
    expect(s.settledCount).toBe(3);
  });

  it('drops implausible readings, keeps the majority of three, and flags two that disagree', () => {
    const three = mergeBathChannels([tc('a', [[0, 330]]), tc('b', [[0, 331]]), tc('c', [[0, 350]])], opts);
    expect(three.points).toEqual([[0, 330.5]]);
    expect(three.channels.map((c) => c.used)).toEqual([true, true, false]);
    const two = mergeBathChannels([tc('a', [[0, 330]]), tc('b', [[0, 340]])], opts);
    expect(two.points).toEqual([[0, 335]]);
    expect(two.disagreementS).toBe(10);
    // 2000 °C is an open thermocouple, not a temperature: the series ends at the last real reading
    const broken = mergeBathChannels([tc('a', [[0, 330], [10, 2000]])], opts);
    expect(broken.points).toEqual([[0, 330]]);
  });

  it('settles only what every live thermocouple has reported; a hole longer than the allowed gap is unknown', () => {
    const lagging = mergeBathChannels([tc('a', [[0, 330], [10, 330], [20, 330], [30, 330]]), tc('b', [[0, 330], [10, 330]])], opts);
    expect(lagging.points.map((p) => p[0])).toEqual([0, 10, 20, 30]);
    expect(lagging.settledCount).toBe(2);
    const hole = mergeBathChannels([tc('a', [[0, 330], [100, 330]])], opts);
    expect(hole.points.map((p) => p[0])).toEqual([0, 10, 20, 30, 70, 80, 90, 100]);
    expect(hole.longestGapS).toBe(30);
  });
});

describe('batch setup from the records', () => {
  it('takes austenitize, transfer, agitation and the line coefficient from the records', () => {
    const b = buildBatchSetup(loadRecords());
    expect(b.basis.austenitize.source).toBe('furnace-zones');
    // zones at 899.7 and 900.4 °C once up; the soak starts on the ramp when their mean passes 880 °C
    expect(b.setup.austenitize.tempC).toBeGreaterThan(898);
    expect(b.setup.austenitize.tempC).toBeLessThan(900.1);
    expect(b.setup.austenitize.minutes).toBeGreaterThan(30);
    expect(b.basis.transferS).toEqual({ value: 8, source: 'load-events' });
    expect(b.setup.agitation).toBe('moderate');
    expect(b.setup.heatTransferWPerM2K).toBe(1400); // the line's 'normal' coefficient
    expect(b.setup.section).toEqual({ shape: 'cylinder', diameterMm: 8 });
  });
  it('assumes the spec where a record is missing, and says so', () => {
    const r = loadRecords();
    const b = buildBatchSetup({ ...r, events: { intoBathMs: r.events.intoBathMs }, agitatorRpm: [], channels: [] });
    expect(b.basis.austenitize).toEqual({ tempC: 895, minutes: 20, source: 'spec' });
    expect(b.basis.transferS).toEqual({ value: WINDOW.maxTransferS, source: 'spec-max' });
    expect(b.warnings.join('\n')).toMatch(/austenitize: no furnace record.*\n.*transferS: no OUT_OF_FURNACE/s);
  });
  it('refuses a heat the model cannot work from, naming the field', () => {
    expect(() => buildBatchSetup({ ...loadRecords(), heat: { material: 'STEEL', chemistryWtPct: { Si: 1.5, Mn: 0.8 } } })).toThrow(PredictionInputError);
    expect(() => buildBatchSetup({ ...loadRecords(), heat: { material: 'STEEL', chemistryWtPct: { Si: 1.5, Mn: 0.8 } } })).toThrow(/chemistryWtPct\.C/);
  });
});

describe('live prediction of a batch', () => {
  const full = loadRecords();

  it('a chain of incremental runs stores exactly what a run from scratch over the same data gives', () => {
    let prev: PredictionState | null = null;
    for (const minutes of [4, 9, 23, 37, 52]) {
      const records = truncated(full, minutes);
      const chained = predicted(predictBatch(records, prev));
      const scratch = predicted(predictBatch(records, null));
      if (prev) expect(chained.incremental).toBe(true);
      expect(chained.result).toEqual(scratch.result);
      expect(chained.inputDigest).toBe(scratch.inputDigest);
      expect(JSON.stringify(chained.state)).toBe(JSON.stringify(scratch.state));
      prev = JSON.parse(JSON.stringify(chained.state)) as PredictionState; // stored as JSON between runs
    }
    const last = predicted(predictBatch(full, prev));
    const scratch = predicted(predictBatch(full, null));
    expect(last.incremental).toBe(true);
    expect(last.result).toEqual(scratch.result);
    expect(last.phase).toBe('DONE');
  });

  it('while in the bath, the rest of the scheduled hold is projected at the logged temperature; out of it, nothing is', () => {
    const running = predicted(predictBatch(truncated(full, 20), null));
    expect(running.phase).toBe('IN_BATH');
    expect(running.result.basis.projection).toMatchObject({ fromS: 1200, toS: 3600, basis: 'batch' });
    expect(running.result.bainite.loggedUntilS).toBe(1200);
    expect(running.result.bainite.curve.at(-1)?.[0]).toBe(3600);
    expect(running.result.bainite.band.at(-1)?.[0]).toBe(3600);
    const done = predicted(predictBatch(full, null));
    expect(done.result.basis.projection).toBeNull();
    expect(done.result.hold.actualEndAt).toBe(new Date(full.events.outOfBathMs as number).toISOString());
    // the same bath seen whole: the projection agreed with what was then logged (to the band's resolution)
    expect(Math.abs(running.result.bainite.fractionAtEnd - done.result.bainite.fractionAtEnd)).toBeLessThan(0.02);
  });

  it('a reading back-filled before the saved horizon makes the next run start from scratch', () => {
    const first = predicted(predictBatch(truncated(full, 30), null));
    const edited = truncated(full, 31);
    const tc1 = edited.channels.find((c) => c.code === 'tc1') as TemperatureChannelSeries;
    const samples = tc1.samples.map((s, i) => (i === 40 ? { ...s, valueC: s.valueC + 3 } : s));
    const changed = { ...edited, channels: edited.channels.map((c) => (c === tc1 ? { ...c, samples } : c)) };
    const next = predicted(predictBatch(changed, first.state));
    expect(next.incremental).toBe(false);
    expect(next.result).toEqual(predicted(predictBatch(changed, null)).result);
  });

  it('equals the engine run over the merged bath series (libs/metallurgy predict) for the logged history', () => {
    const done = predicted(predictBatch(full, null));
    const setup = buildBatchSetup(full).setup;
    const series = mergeBathChannels(full.channels, {
      intoBathMs: full.events.intoBathMs as number,
      outOfBathMs: full.events.outOfBathMs,
      maxGapS: WINDOW.maxChannelGapS,
      maxDiffC: WINDOW.twinTolerance.maxDiffC,
      plausible: WINDOW.plausible,
    });
    const engine = predict({ ...setup, bath: series.points.map(([t, v]) => [t, Math.round(v * 1e4) / 1e4]) });
    expect(done.result.bands).toEqual(engine.bands);
    expect(done.result.final).toEqual(engine.final);
  });

  it('the hold advisor: a colder bath needs a longer hold, a hotter one a shorter (Li 1998 rates rise with temperature below the nose)', () => {
    const criteria = { requireCompleteTransformation: true, minBainiteFraction: 0.2 };
    const at = (bathC: number) => predicted(predictBatch(truncated(loadRecords({ bathC, criteria, holdMin: 240 }), 10), null)).result.hold;
    const cold = at(322);
    const nominal = at(330);
    const hot = at(338);
    console.log(
      `earliest safe end: 322 °C ${cold.earliestSafeEndS} s (extra ${cold.extraHoldMin} min), 330 °C ${nominal.earliestSafeEndS} s, 338 °C ${hot.earliestSafeEndS} s (extra ${hot.extraHoldMin} min)`,
    );
    expect(cold.earliestSafeEndS as number).toBeGreaterThan(nominal.earliestSafeEndS as number);
    expect(hot.earliestSafeEndS as number).toBeLessThan(nominal.earliestSafeEndS as number);
    expect(cold.extraHoldMin as number).toBeGreaterThan(0);
    expect(hot.extraHoldMin as number).toBeLessThan(0);
    expect(cold.bathOffsetC as number).toBeGreaterThan(-8.5); // 8 °C below nominal, less what is left of the immersion rise
    expect(cold.bathOffsetC as number).toBeLessThan(-7);
    expect(nominal.nominalEarliestSafeEndS).toBe(cold.nominalEarliestSafeEndS);
  });
});

describe('lab calibration of the live prediction', () => {
  // A hardness calibration learned from residuals of −40 HV (measured − raw p50); the same load predicted with it.
  const calibrated = (count: number) => {
    let s = startCalibration(30);
    for (let i = 0; i < count; i++) s = updateCalibration(s, -40);
    return { hardnessHV: s };
  };
  const criteria = { requireCompleteTransformation: true, hardness: { scale: 'HV' as const, min: 300, max: 900 } };
  const raw = predicted(predictBatch(loadRecords({ criteria }), null));

  it('keeps the raw bands; below the minimum number of results nothing moves and the basis says none was used', () => {
    const below = predicted(predictBatch({ ...loadRecords({ criteria }), labCalibration: calibrated(DEFAULT_MIN_RESULTS - 1) }, null));
    expect(below.result.bands.hardnessHV).toEqual(raw.result.bands.hardnessHV);
    expect(below.result.rawBands!.hardnessHV).toEqual(raw.result.bands.hardnessHV);
    expect(below.result.basis.labCalibration).toBeNull();
    expect(below.inputDigest).toBe(raw.inputDigest);
  });

  it('in force, moves the judged hardness band by the bias, keeps the raw band for the calibration to learn from, and names the calibration', () => {
    const cal = calibrated(DEFAULT_MIN_RESULTS);
    const out = predicted(predictBatch({ ...loadRecords({ criteria }), labCalibration: cal }, null));
    const bias = summarizeCalibration(cal.hardnessHV).bias;
    const rawHv = raw.result.bands.hardnessHV as { p05: number; p50: number; p95: number };
    const hv = out.result.bands.hardnessHV as { p05: number; p50: number; p95: number };
    expect(out.result.rawBands!.hardnessHV).toEqual(rawHv);
    // bias added to every member before the engine rounds to whole HV: each percentile moves by the bias ±0.5
    for (const k of ['p05', 'p50', 'p95'] as const) expect(Math.abs(hv[k] - (rawHv[k] + bias))).toBeLessThanOrEqual(0.5 + 1e-9);
    expect(out.result.properties.hardnessHV).toEqual(out.result.bands.hardnessHV);
    expect(out.result.basis.labCalibration!.quantities.hardnessHV!.n).toBe(DEFAULT_MIN_RESULTS);
    expect(out.result.basis.labCalibration!.quantities.hardnessHV!.bias).toBeCloseTo(bias, 12);
    expect(out.result.basis.labCalibration!.applied!.hardnessHV).toEqual(engineBandCalibration(rawHv, cal.hardnessHV));
    const verdict = out.result.verdicts.find((v) => v.criterion === 'hardness')!;
    expect(verdict.p50).toBe(hv.p50);
    expect(out.inputDigest).not.toBe(raw.inputDigest);
    // what the calibration reads back from the stored result is the raw band, not the corrected one
    expect(rawPredictedBand(out.result, 'hardnessHV')).toEqual({ band: rawHv, from: 'rawBands.hardnessHV' });
  });
});
