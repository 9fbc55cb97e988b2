import { describe, expect, it } from 'vitest';
import { cusumArl, ewmaArl } from './arl.js';
import { DriftConfigError, type DriftChartConfigOverrides, type DriftMetric } from './config.js';
import { DriftInputError, estimatePhaseILimits, specifiedLimits, type FrozenLimits } from './individuals.js';
import { driftSignalEvidence, evaluateDrift, restartDriftMonitor, startDriftMonitor, stepDriftMonitor, type DriftMonitorState, type DriftPoint, type DriftSignal } from './monitor.js';
import { createSeededRandom } from './random.js';
import type { LotValue } from './types.js';

// Invented demo process: bath temperature mean during hold, nominal 360 °C, lot-to-lot σ 1.5 °C.
const NOMINAL_C = 360;
const SIGMA_C = 1.5;

/** Phase I history and a Phase II series whose mean steps by `shiftSigma` from lot `shiftAtLot` (1-based). */
function lotSeries(seed: number, opts: { historyLots: number; lots: number; shiftAtLot: number; shiftSigma: number }) {
  const rng = createSeededRandom(seed);
  const history: LotValue[] = Array.from({ length: opts.historyLots }, (_, i) => ({ lotId: `H${i + 1}`, value: NOMINAL_C + SIGMA_C * rng.nextNormal() }));
  const lots: LotValue[] = Array.from({ length: opts.lots }, (_, i) => ({
    lotId: `B${i + 1}`,
    value: NOMINAL_C + SIGMA_C * (rng.nextNormal() + (i + 1 >= opts.shiftAtLot ? opts.shiftSigma : 0)),
  }));
  return { history, lots };
}

const firstIndex = (signals: DriftSignal[], prefix: string) => signals.find((s) => s.key.startsWith(prefix))?.index ?? null;
const firstBeyond3Sigma = (points: DriftPoint[]) => points.findIndex((p) => p.value > p.individuals.ucl || p.value < p.individuals.lcl);

describe('planted shift: the drift charts signal before any lot breaks a limit', () => {
  it('a +1σ step from lot 30 is caught by EWMA and CUSUM before any lot leaves the 3σ limits (seed 20260601)', () => {
    // One fixed seed, chosen before looking at the outcome; the next test shows how typical it is.
    const { history, lots } = lotSeries(20260601, { historyLots: 50, lots: 80, shiftAtLot: 30, shiftSigma: 1 });
    const limits = estimatePhaseILimits(history);
    const evaluation = evaluateDrift({ product: 'ADI-1050 carrier', line: 'salt-line-2', metric: 'bath-mean-temp-hold', limits, lots, specLimits: { lower: 355, upper: 365 } });
    const ewmaAt = firstIndex(evaluation.signals, 'ewma:');
    const cusumAt = firstIndex(evaluation.signals, 'cusum:');
    const shewhartAt = firstBeyond3Sigma(evaluation.points);
    console.log(
      `planted +1σ at lot 30 (seed 20260601): Phase I centre ${limits.centre.toFixed(2)} °C, σ̂ ${limits.sigma.toFixed(3)} °C; ` +
        `EWMA signals at lot ${ewmaAt! + 1}, CUSUM at lot ${cusumAt! + 1}, first lot beyond 3σ: ${shewhartAt < 0 ? 'none' : shewhartAt + 1}, ` +
        `first spec breach: ${evaluation.firstSpecBreach ? evaluation.firstSpecBreach.index + 1 : 'none'} (lead ${evaluation.leadLotsBeforeSpecBreach} lots)`,
    );
    // No false alarm before the shift, and both charts signal after it...
    expect(evaluation.firstSignal).not.toBeNull();
    expect(evaluation.firstSignal!.index).toBeGreaterThanOrEqual(29);
    expect(ewmaAt).not.toBeNull();
    expect(cusumAt).not.toBeNull();
    // ...before any single lot is beyond the 3σ individuals limits (the Shewhart chart, WE1)...
    expect(shewhartAt === -1 || shewhartAt > Math.max(ewmaAt!, cusumAt!)).toBe(true);
    expect(firstIndex(evaluation.signals, 'WE1:') ?? Infinity).toBeGreaterThan(Math.max(ewmaAt!, cusumAt!));
    // ...and before any lot breaks the spec; the first signal is an upward, adverse drift signal.
    expect(evaluation.firstSignal!.source === 'ewma' || evaluation.firstSignal!.source === 'cusum').toBe(true);
    expect(evaluation.firstSignal!.direction).toBe('up');
    expect(evaluation.firstAdverseSignal).toEqual(evaluation.firstSignal);
    if (evaluation.firstSpecBreach) expect(evaluation.leadLotsBeforeSpecBreach!).toBeGreaterThan(0);
    // The CUSUM's estimate of the new mean is near nominal + 1σ = 361.5 °C (Montgomery's μ̂ = μ₀ + σ(k + C⁺/N⁺)).
    const cusumSignal = evaluation.signals.find((s) => s.key === 'cusum:up')!;
    expect(cusumSignal.estimatedMean!).toBeGreaterThan(360.5);
    expect(cusumSignal.estimatedMean!).toBeLessThan(363);
  });

  it('over 600 seeded series the same holds in most of them, with detection delays far below the Shewhart chart', () => {
    // Known parameters (specified limits) so that the figures describe the charts, not Phase I error.
    // Our simulation, not a published figure: EWMA and CUSUM beat the 3σ chart in about 4 series of 5
    // for a 1σ step; the thresholds below guard against a regression with ~4 standard errors of margin.
    const limits = specifiedLimits(NOMINAL_C, SIGMA_C);
    let usable = 0;
    let ewmaFirst = 0;
    let cusumFirst = 0;
    const delays = { ewma: [] as number[], cusum: [] as number[], shewhart: [] as number[] };
    for (let s = 0; s < 600; s++) {
      const { lots } = lotSeries(30_000 + s, { historyLots: 0, lots: 160, shiftAtLot: 30, shiftSigma: 1 });
      const ev = evaluateDrift({ product: 'P', line: 'L', metric: 'bath-mean-temp-hold', limits, lots });
      const e = firstIndex(ev.signals, 'ewma:') ?? Infinity;
      const c = firstIndex(ev.signals, 'cusum:') ?? Infinity;
      const w = firstBeyond3Sigma(ev.points) < 0 ? Infinity : firstBeyond3Sigma(ev.points);
      if (Math.min(e, c, w) < 29) continue; // a false alarm before the shift: not a detection race
      usable++;
      if (e < w) ewmaFirst++;
      if (c < w) cusumFirst++;
      delays.ewma.push(e - 28);
      delays.cusum.push(c - 28);
      delays.shewhart.push(w - 28);
    }
    const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[xs.length >> 1];
    console.log(
      `1σ step at lot 30, ${usable} of 600 series without a false alarm before it: EWMA first in ${((100 * ewmaFirst) / usable).toFixed(1)}%, ` +
        `CUSUM first in ${((100 * cusumFirst) / usable).toFixed(1)}%; median delay (lots after the shift, inclusive) EWMA ${median(delays.ewma)}, ` +
        `CUSUM ${median(delays.cusum)}, 3σ chart ${median(delays.shewhart)}`,
    );
    expect(usable).toBeGreaterThan(450);
    expect(ewmaFirst / usable).toBeGreaterThan(0.7);
    expect(cusumFirst / usable).toBeGreaterThan(0.7);
    expect(median(delays.ewma)).toBeLessThan(median(delays.shewhart) / 2);
    expect(median(delays.cusum)).toBeLessThan(median(delays.shewhart) / 2);
  });

  it('a margin that shrinks is adverse; the same margin growing signals but is not adverse', () => {
    const limits = specifiedLimits(12, 2); // e.g. °C of margin to the bainite ceiling (invented)
    const down = lotSeries(8, { historyLots: 0, lots: 60, shiftAtLot: 20, shiftSigma: -1.5 }).lots.map((l) => ({ ...l, value: 12 + ((l.value - NOMINAL_C) / SIGMA_C) * 2 }));
    const up = lotSeries(8, { historyLots: 0, lots: 60, shiftAtLot: 20, shiftSigma: 1.5 }).lots.map((l) => ({ ...l, value: 12 + ((l.value - NOMINAL_C) / SIGMA_C) * 2 }));
    const metric: DriftMetric = 'bainite-ceiling-margin';
    const evDown = evaluateDrift({ product: 'P', line: 'L', metric, limits, lots: down });
    const evUp = evaluateDrift({ product: 'P', line: 'L', metric, limits, lots: up });
    expect(evDown.adverseDirection).toBe('down');
    expect(evDown.firstAdverseSignal?.direction).toBe('down');
    expect(evUp.signals.some((s) => s.direction === 'up')).toBe(true);
    expect(evUp.signals.filter((s) => s.direction === 'up').every((s) => !s.adverse)).toBe(true);
  });
});

describe('in-control series: false alarms at the rate of the published run lengths', () => {
  // A long seeded in-control run through the incremental monitor, restarting each chart when it signals
  // (a renewal process), so the number of alarms in N lots is ≈ N/ARL0 with a standard error ≈ √count.
  function alarmsInLongRun(config: DriftChartConfigOverrides, lots: number, seed: number): number {
    const rng = createSeededRandom(seed);
    let state = startDriftMonitor({ product: 'P', line: 'L', metric: 'measured-hardness', limits: specifiedLimits(0, 1), config });
    let alarms = 0;
    for (let i = 0; i < lots; i++) {
      const r = stepDriftMonitor(state, { lotId: `X${i}`, value: rng.nextNormal() });
      state = r.state;
      if (r.signals.length > 0) {
        alarms++;
        state = restartDriftMonitor(state);
      }
    }
    return alarms;
  }
  const N = 150_000;

  it('EWMA λ = 0.2, L = 2.962: one alarm per ≈500 lots (Lucas & Saccucci 1990)', () => {
    const alarms = alarmsInLongRun({ cusum: { enabled: false }, runRules: { westernElectric: [] } }, N, 31);
    // ARL0 = 500: Lucas & Saccucci (1990) design as tabulated in Montgomery (from memory); our chain 499.6.
    const expected = N / 500;
    console.log(`EWMA in control: ${alarms} alarms in ${N} lots (expected ${expected.toFixed(0)} for ARL0 500; observed ARL ${(N / alarms).toFixed(0)})`);
    expect(Math.abs(alarms - expected)).toBeLessThan(3 * Math.sqrt(expected) + 0.01 * expected);
  });

  it('CUSUM k = 0.5, h = 4.77: one alarm per ≈370 lots (Hawkins 1993)', () => {
    const alarms = alarmsInLongRun({ ewma: { enabled: false }, runRules: { westernElectric: [] } }, N, 32);
    // ARL0 = 370: Hawkins (1993) h-for-k table as reproduced in Montgomery (from memory); our chain 368.5.
    const expected = N / 370;
    console.log(`CUSUM in control: ${alarms} alarms in ${N} lots (expected ${expected.toFixed(0)} for ARL0 370; observed ARL ${(N / alarms).toFixed(0)})`);
    expect(Math.abs(alarms - expected)).toBeLessThan(3 * Math.sqrt(expected) + 0.01 * expected);
  });

  it('the default scheme (EWMA + CUSUM + WE1) raises far fewer alarms than the four WE rules alone', () => {
    const scheme = alarmsInLongRun({}, 60_000, 33);
    const weRules = alarmsInLongRun({ ewma: { enabled: false }, cusum: { enabled: false }, runRules: { westernElectric: [1, 2, 3, 4] } }, 60_000, 34);
    console.log(`in control, 60000 lots: default scheme ${scheme} alarms (ARL ${(60_000 / scheme).toFixed(0)}), WE rules 1–4 ${weRules} (ARL ${(60_000 / weRules).toFixed(0)}; Champ & Woodall 91.75)`);
    // Champ & Woodall (1987): WE 1–4 ARL0 = 91.75 (from memory) → 654 ± 26 alarms.
    expect(Math.abs(weRules - 60_000 / 91.75)).toBeLessThan(3 * Math.sqrt(60_000 / 91.75) + 0.02 * (60_000 / 91.75));
    expect(scheme).toBeLessThan(weRules / 1.5);
    // Consistency with the chains: the scheme alarms at least as often as its most alarming member.
    const mostAlarming = Math.min(ewmaArl({ lambda: 0.2, L: 2.962, shift: 0, states: 201 }).arl, cusumArl({ k: 0.5, h: 4.77, shift: 0, states: 150 }).twoSided);
    expect(scheme).toBeGreaterThan(60_000 / mostAlarming);
  });
});

describe('batch and incremental forms are equal', () => {
  function foldIncrementally(input: Parameters<typeof evaluateDrift>[0]) {
    let state: DriftMonitorState = startDriftMonitor(input);
    const points: DriftPoint[] = [];
    const signals: DriftSignal[] = [];
    for (const lot of input.lots) {
      // Round-trip the state through JSON each lot, as a worker storing it in the database would.
      state = JSON.parse(JSON.stringify(state)) as DriftMonitorState;
      const r = stepDriftMonitor(state, lot);
      points.push(r.point);
      signals.push(...r.signals);
      state = r.state;
    }
    return { state, points, signals };
  }

  // A series with a step, a trend, a stratified stretch and an alternating stretch, so that every kind of
  // signal occurs.
  function patternedSeries(seed: number): LotValue[] {
    const rng = createSeededRandom(seed);
    const values: number[] = [];
    for (let i = 0; i < 40; i++) values.push(rng.nextNormal());
    for (let i = 0; i < 25; i++) values.push(1.2 + rng.nextNormal());
    for (let i = 0; i < 10; i++) values.push(0.6 + 0.2 * rng.nextNormal()); // a run on one side (WE4, N2)
    for (let i = 0; i < 10; i++) values.push(-2 + 0.5 * i + 0.05 * rng.nextNormal());
    for (let i = 0; i < 20; i++) values.push(0.3 * rng.nextNormal());
    for (let i = 0; i < 16; i++) values.push((i % 2 === 0 ? 1.6 : -1.6) + 0.1 * rng.nextNormal());
    for (let i = 0; i < 30; i++) values.push(-1 + rng.nextNormal());
    return values.map((v, i) => ({ lotId: `lot-${String(i + 1).padStart(3, '0')}`, value: 50 + 4 * v }));
  }

  const configs: [string, DriftChartConfigOverrides][] = [
    ['defaults', {}],
    ['every rule, MR, exact limits, FIR', { ewma: { limits: 'exact' }, cusum: { headStart: 2.385 }, movingRange: { enabled: true }, runRules: { westernElectric: [1, 2, 3, 4], nelson: [1, 2, 3, 4, 5, 6, 7, 8] } }],
    ['λ = 0.05 (evidence window 59 lots)', { ewma: { lambda: 0.05, L: 2.615 }, runRules: { westernElectric: [1, 2, 3, 4], nelson: [2, 3] } }],
    ['CUSUM only, Nelson rules', { ewma: { enabled: false }, runRules: { westernElectric: [], nelson: [1, 2, 3, 4, 5, 6, 7, 8] } }],
  ];

  for (const [name, config] of configs) {
    it(`for ${name}`, () => {
      const lots = patternedSeries(99);
      const input = { product: 'P-17', line: 'line-A', metric: 'measured-hardness' as const, limits: specifiedLimits(50, 4, 3), config, specLimits: { lower: 38, upper: 62 }, lots };
      const batch = evaluateDrift(input);
      const inc = foldIncrementally(input);
      expect(batch.signals.length).toBeGreaterThan(5);
      expect(inc.points).toEqual(batch.points);
      expect(inc.signals).toEqual(batch.signals);
      expect(inc.state.firstSignal).toEqual(batch.firstSignal);
      expect(inc.state.firstAdverseSignal).toEqual(batch.firstAdverseSignal);
      expect(inc.state.firstSpecBreach).toEqual(batch.firstSpecBreach);
      expect(inc.state.count).toBe(lots.length);
    });
  }

  it('covers every run rule in the patterned series (so the equality above is not vacuous)', () => {
    const batch = evaluateDrift({
      product: 'P-17',
      line: 'line-A',
      metric: 'measured-hardness',
      limits: specifiedLimits(50, 4),
      config: { runRules: { westernElectric: [1, 2, 3, 4], nelson: [1, 2, 3, 4, 5, 6, 7, 8] }, movingRange: { enabled: true } },
      lots: patternedSeries(99),
    });
    const rules = new Set(batch.signals.map((s) => s.rule));
    for (const r of ['ewma', 'cusum-upper', 'cusum-lower', 'moving-range', 'WE1', 'WE2', 'WE3', 'WE4', 'N1', 'N2', 'N3', 'N4', 'N5', 'N6', 'N7', 'N8']) expect(rules).toContain(r);
  });
});

describe('chart data and signals', () => {
  const limits = specifiedLimits(100, 2, 4);
  const lots = [100, 101, 99, 100, 105, 104, 105, 106, 104, 100].map((value, i) => ({ lotId: `L${i + 1}`, value }));
  const evaluation = evaluateDrift({ product: 'P', line: 'L', metric: 'predicted-hardness-p50', limits, lots, config: { runRules: { westernElectric: [1, 2, 3] } } });

  it('is plain JSON that survives a round trip unchanged', () => {
    expect(JSON.parse(JSON.stringify(evaluation))).toEqual(evaluation);
    expect(JSON.stringify(evaluation)).not.toMatch(/NaN|Infinity/);
    expect(evaluation.schema).toBe('ausline.drift-evaluation/v1');
  });

  it('names chart, rule, direction, points and limits version in each signal, and marks episode onsets', () => {
    const we3 = evaluation.signals.filter((s) => s.rule === 'WE3');
    // z = 0, .5, −.5, 0, 2.5, 2, 2.5, 3, 2, 0: 4 of 5 beyond 1σ first holds at lot 8 (lots 5–8).
    expect(we3[0].lotId).toBe('L8');
    expect(we3[0].lotIds).toEqual(['L4', 'L5', 'L6', 'L7', 'L8']);
    expect(we3[0].ruleSet).toBe('western-electric');
    expect(we3[0].direction).toBe('up');
    expect(we3[0].onset).toBe(true);
    expect(we3[1].lotId).toBe('L9');
    expect(we3[1].onset).toBe(false); // the same episode continues
    expect(we3[0].limitsVersion).toBe(4);
    expect(we3[0].message).toContain('Western Electric rule 3');
    // 2 of 3 beyond 2σ: lot 6 is exactly 2σ (not beyond), so the pattern completes at lot 7 (lots 5 and 7).
    const we2 = evaluation.signals.find((s) => s.rule === 'WE2')!;
    expect(we2.lotId).toBe('L7');
    expect(we2.lotIds).toEqual(['L5', 'L6', 'L7']);
  });

  it('cuts the evidence for a deviation from the evaluation', () => {
    const signal = evaluation.firstSignal!;
    const evidence = driftSignalEvidence(evaluation, signal, 2);
    expect(evidence.signal).toEqual(signal);
    expect(evidence.points[evidence.points.length - 1].index).toBe(signal.index);
    expect(evidence.points[0].index).toBe(Math.max(0, signal.pointIndices[0] - 2));
    expect(evidence.limits.version).toBe(4);
  });
});

describe('restart and new limits', () => {
  it('restarts with fresh statistics, the FIR head start and a new limits version', () => {
    const v1 = specifiedLimits(0, 1, 1);
    let state = startDriftMonitor({ product: 'P', line: 'L', metric: 'measured-hardness', limits: v1 });
    for (let i = 0; i < 12; i++) state = stepDriftMonitor(state, { lotId: `A${i}`, value: 1.5 }).state;
    expect(state.firstSignal).not.toBeNull();
    const v2: FrozenLimits = specifiedLimits(1.5, 1, 2);
    const restarted = restartDriftMonitor(state, { limits: v2, fastInitialResponse: true });
    expect(restarted.firstSignal).toBeNull();
    expect(restarted.cusum!.upper).toBeCloseTo(4.77 / 2, 12);
    expect(restarted.ewma!.statistic).toBe(1.5);
    expect(restarted.startIndex).toBe(12);
    // A lot 3σ above the new centre: the FIR CUSUM signals at once (2.385 + 3 − 0.5 > 4.77) under v2.
    const r = stepDriftMonitor(restarted, { lotId: 'A12', value: 4.6 });
    expect(r.point.index).toBe(12);
    const cusumSignal = r.signals.find((s) => s.source === 'cusum')!;
    expect(cusumSignal.limitsVersion).toBe(2);
    expect(cusumSignal.lotIds).toEqual(['A12']); // evidence stops at the restart
    expect(state.count).toBe(12); // the old state is untouched
  });
});

describe('bad input is rejected with the field path', () => {
  const base = { product: 'P', line: 'L', metric: 'measured-hardness' as DriftMetric, limits: specifiedLimits(0, 1), lots: [{ lotId: 'a', value: 1 }] };
  it('names config, metric, spec and lot fields', () => {
    expect(() => evaluateDrift({ ...base, config: { ewma: { lambda: 1.5 } } })).toThrow(DriftConfigError);
    try {
      evaluateDrift({ ...base, config: { ewma: { lambda: 1.5 }, cusum: { h: -1 }, runRules: { nelson: [9 as never] } } });
    } catch (e) {
      expect((e as DriftConfigError).issues.map((i) => i.path)).toEqual(['config.ewma.lambda', 'config.cusum.h', 'config.runRules.nelson[0]']);
    }
    expect(() => evaluateDrift({ ...base, config: { cusum: { headStart: 5 } } })).toThrow('config.cusum.headStart');
    expect(() => evaluateDrift({ ...base, config: { ewma: { limits: 'weekly' as never } } })).toThrow('config.ewma.limits');
    expect(() => evaluateDrift({ ...base, config: { shewhart: {} } as never })).toThrow('config.shewhart: unknown chart section');
    expect(() => evaluateDrift({ ...base, metric: 'hardness' as never })).toThrow(DriftInputError);
    expect(() => evaluateDrift({ ...base, metric: 'hardness' as never })).toThrow(/^metric: must be one of/);
    expect(() => evaluateDrift({ ...base, specLimits: { lower: 5, upper: 1 } })).toThrow('specLimits.upper');
    expect(() => evaluateDrift({ ...base, lots: [{ lotId: 'a', value: 1 }, { lotId: 'b', value: Number.POSITIVE_INFINITY }] })).toThrow('lots[1].value');
    expect(() => evaluateDrift({ ...base, limits: { ...specifiedLimits(0, 1), sigma: 0 } })).toThrow('limits.sigma');
  });

  it('refuses to chart the same lot twice in a row of the incremental monitor', () => {
    const s = stepDriftMonitor(startDriftMonitor(base), { lotId: 'a', value: 1 }).state;
    expect(() => stepDriftMonitor(s, { lotId: 'a', value: 2 })).toThrow("lot.lotId: lot 'a' was already charted");
  });
});
