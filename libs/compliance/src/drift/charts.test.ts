import { describe, expect, it } from 'vitest';
import { cusumChart } from './cusum.js';
import { ewmaChart, ewmaSigmaFactor } from './ewma.js';
import { D2_SPAN2, DriftInputError, estimatePhaseILimits, individualsChart, processCapability, specifiedLimits } from './individuals.js';
import { createSeededRandom } from './random.js';

const lotsOf = (values: number[], prefix = 'L') => values.map((value, i) => ({ lotId: `${prefix}${i + 1}`, value }));

describe('I-MR Phase I limits', () => {
  it('computes x̄, MR̄, σ̂ = MR̄/d₂ and the I and MR limits by hand', () => {
    // 20 lots alternating 10 and 12: MR̄ = 2 exactly, x̄ = 11, σ̂ = 2/1.128.
    const values = Array.from({ length: 20 }, (_, i) => (i % 2 === 0 ? 10 : 12));
    const limits = estimatePhaseILimits(lotsOf(values));
    expect(limits.centre).toBeCloseTo(11, 12);
    expect(limits.movingRange!.centre).toBeCloseTo(2, 12);
    expect(limits.sigma).toBeCloseTo(2 / 1.128, 12);
    // I chart: x̄ ± 3·MR̄/d₂ = x̄ ± 2.66·MR̄ (E₂ = 3/1.128 = 2.6596, Montgomery's constants table).
    expect(limits.individuals.ucl).toBeCloseTo(11 + 2.6596 * 2, 3);
    // MR chart: UCL = D₄·MR̄ = 3.267·MR̄ (Montgomery's constants table, n = 2).
    expect(limits.movingRange!.ucl).toBeCloseTo(3.267 * 2, 12);
    expect(limits.basis!.movingRangeCount).toBe(19);
  });

  it('d₂ for span 2 is the table value, close to the exact 2/√π', () => {
    // d₂(n = 2) = E|X₁ − X₂|/σ = 2/√π = 1.1284 (practice.md §4.2 [C]).
    expect(Math.abs(D2_SPAN2 - 2 / Math.sqrt(Math.PI))).toBeLessThan(5e-4);
  });

  it('recovers σ of simulated in-control lots, and the robust median-MR estimate agrees', () => {
    const rng = createSeededRandom(11);
    const values = Array.from({ length: 400 }, () => 350 + 2.5 * rng.nextNormal());
    const avg = estimatePhaseILimits(lotsOf(values));
    const med = estimatePhaseILimits(lotsOf(values), { sigmaMethod: 'median-moving-range' });
    // 400 lots: the MR̄/d₂ estimate has a relative SE near 0.83/√400 ≈ 4%; allow 3 SE.
    expect(avg.sigma / 2.5).toBeGreaterThan(0.88);
    expect(avg.sigma / 2.5).toBeLessThan(1.12);
    expect(med.sigma / 2.5).toBeGreaterThan(0.85);
    expect(med.sigma / 2.5).toBeLessThan(1.15);
    expect(avg.centre).toBeCloseTo(350, 0);
  });

  it('within-σ from moving ranges is not inflated by a drifting history, unlike the overall s', () => {
    // A slow ramp of 4σ over 100 lots: the moving ranges barely see it, the overall s does.
    const rng = createSeededRandom(12);
    const values = Array.from({ length: 100 }, (_, i) => 0.04 * i + rng.nextNormal());
    const limits = estimatePhaseILimits(lotsOf(values));
    expect(limits.sigma).toBeLessThan(1.2);
    expect(limits.basis!.overallSd).toBeGreaterThan(limits.sigma * 1.2);
  });

  it('trims an out-of-control lot when asked, and drops both of its moving ranges', () => {
    const rng = createSeededRandom(13);
    const values = Array.from({ length: 30 }, () => 100 + rng.nextNormal());
    values[14] = 112; // a lot with an assignable cause
    const kept = estimatePhaseILimits(lotsOf(values));
    const trimmed = estimatePhaseILimits(lotsOf(values), { trimRounds: 3 });
    expect(kept.basis!.excluded).toEqual([]);
    expect(trimmed.basis!.excluded[0]).toEqual({ lotId: 'L15', reason: 'individuals-limit' });
    expect(trimmed.basis!.lotIds).not.toContain('L15');
    expect(trimmed.sigma).toBeLessThan(kept.sigma);
    // 29 moving ranges minus the two touching lot 15 (more if a second round removed another lot).
    expect(trimmed.basis!.movingRangeCount).toBeLessThanOrEqual(27);
  });

  it('rejects bad input naming the field', () => {
    expect(() => estimatePhaseILimits(lotsOf([1, 2, 3]))).toThrow(/at least 20 lots/);
    const bad = lotsOf(Array.from({ length: 25 }, (_, i) => i));
    bad[4] = { lotId: 'L5', value: Number.NaN };
    expect(() => estimatePhaseILimits(bad)).toThrow(DriftInputError);
    expect(() => estimatePhaseILimits(bad)).toThrow('lots[4].value');
    const dup = lotsOf(Array.from({ length: 25 }, (_, i) => i));
    dup[7] = { lotId: 'L1', value: 3 };
    expect(() => estimatePhaseILimits(dup)).toThrow("lots[7].lotId: duplicate lot id 'L1'");
    expect(() => specifiedLimits(10, 0)).toThrow('limits.sigma');
  });

  it('flags individuals and moving ranges beyond their limits in Phase II', () => {
    const limits = specifiedLimits(50, 1);
    const chart = individualsChart([50, 53.2, 49.5, 46.8, 47], limits);
    expect(chart.map((p) => p.beyondLimit)).toEqual([null, 'above', null, 'below', null]);
    expect(chart[0].movingRange).toBeNull();
    // MR UCL = D₄·d₂·σ = 3.267·1.128 = 3.685: the ranges are 3.2, 3.7, 2.7, 0.2.
    expect(chart[2].movingRangeUcl).toBeCloseTo(3.685, 3);
    expect(chart.map((p) => p.movingRangeBeyondLimit)).toEqual([false, false, true, false, false]);
    expect(individualsChart([50, 54], limits)[1].movingRangeBeyondLimit).toBe(true);
  });

  it('computes capability indices by their definitions', () => {
    // practice.md §4.6: Cp = (USL − LSL)/6σ, Cpk = min(USL − μ, μ − LSL)/3σ.
    const values = [9, 11, 9, 11, 9, 11]; // mean 10
    const cap = processCapability(values, 0.5, { lower: 7, upper: 14 });
    expect(cap.cp).toBeCloseTo(7 / 3, 12);
    expect(cap.cpk).toBeCloseTo(3 / 1.5, 12);
    const oneSided = processCapability(values, 0.5, { lower: 7 });
    expect(oneSided.cp).toBeNull();
    expect(oneSided.cpl).toBeCloseTo(2, 12);
    expect(oneSided.cpk).toBeCloseTo(2, 12);
  });
});

describe('EWMA chart', () => {
  it('reproduces the NIST/SEMATECH e-Handbook §6.3.2.4 EWMA example', () => {
    // NIST/SEMATECH e-Handbook of Statistical Methods §6.3.2.4 sample data and results (from memory):
    // target 50, s = 2.0539, λ = 0.3, L = 3 → UCL 52.5884, LCL 47.4115, EWMA values to 2 decimals.
    const data = [52.0, 47.0, 53.0, 49.3, 50.1, 47.0, 51.0, 50.1, 51.2, 50.5, 49.6, 47.6, 49.9, 51.3, 47.8, 51.2, 52.6, 52.4, 53.6, 52.1];
    const expected = [50.6, 49.52, 50.56, 50.18, 50.16, 49.21, 49.75, 49.85, 50.26, 50.33, 50.11, 49.36, 49.52, 50.05, 49.38, 49.92, 50.73, 51.23, 51.94, 51.99];
    const chart = ewmaChart(data, { centre: 50, sigma: 2.0539 }, { lambda: 0.3, L: 3, limits: 'asymptotic' });
    chart.forEach((p, i) => expect(Math.abs(p.statistic - expected[i])).toBeLessThan(0.006));
    expect(chart[0].ucl).toBeCloseTo(52.5884, 3);
    expect(chart[0].lcl).toBeCloseTo(47.4115, 3);
    expect(chart.every((p) => p.signal === null)).toBe(true); // the handbook's process is in control
  });

  it('exact limits start at L·λ·σ and widen to the asymptote', () => {
    // σ_z(1) = σ·λ exactly: √(λ/(2−λ)·(1 − (1−λ)²)) = λ (Montgomery eq. for the EWMA variance).
    expect(ewmaSigmaFactor(0.2, 1)).toBeCloseTo(0.2, 14);
    const chart = ewmaChart([0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0], { centre: 0, sigma: 1 }, { lambda: 0.2, L: 3, limits: 'exact' });
    expect(chart[0].ucl).toBeCloseTo(0.6, 12);
    for (let i = 1; i < chart.length; i++) expect(chart[i].ucl).toBeGreaterThan(chart[i - 1].ucl);
    expect(chart[29].ucl).toBeCloseTo(3 * Math.sqrt(0.2 / 1.8), 4);
  });

  it('signals a sustained shift, and with λ = 1 is the Shewhart chart', () => {
    const up = ewmaChart([1, 1, 1, 1, 1, 1, 1, 1, 1, 1], { centre: 0, sigma: 1 }, { lambda: 0.2, L: 2.962, limits: 'asymptotic' });
    // z_t = 1 − 0.8^t crosses 2.962·√(0.2/1.8) = 0.987 only when 0.8^t < 0.013, i.e. t ≥ 20: not yet.
    expect(up.every((p) => p.signal === null)).toBe(true);
    const big = ewmaChart([1.5, 1.5, 1.5, 1.5, 1.5, 1.5], { centre: 0, sigma: 1 }, { lambda: 0.2, L: 2.962, limits: 'asymptotic' });
    // 1.5·(1 − 0.8^t) > 0.987 first at t = 5 (1.5·0.672 = 1.008).
    expect(big.findIndex((p) => p.signal === 'up')).toBe(4);
    const shewhart = ewmaChart([2.9, -3.1], { centre: 0, sigma: 1 }, { lambda: 1, L: 3, limits: 'asymptotic' });
    expect(shewhart.map((p) => p.signal)).toEqual([null, 'down']);
  });
});

describe('tabular CUSUM', () => {
  it("reproduces Montgomery's tabular CUSUM example (μ₀ = 10, σ = 1, k = 0.5, h = 5)", () => {
    // Montgomery, Introduction to Statistical Quality Control, Example 9.1 (data and results from
    // memory): C⁺ first exceeds H = 5 at sample 29 with C⁺ = 5.28 after N⁺ = 7 non-zero periods, giving
    // the shift estimate μ̂ = 10 + 0.5 + 5.28/7 = 11.25; the lower CUSUM never signals.
    const x = [9.45, 7.99, 9.29, 11.66, 12.16, 10.18, 8.04, 11.46, 9.2, 10.34, 9.03, 11.47, 10.51, 9.4, 10.08, 9.37, 10.62, 10.31, 8.52, 10.84, 10.9, 9.33, 12.29, 11.5, 10.6, 11.08, 10.38, 11.62, 11.31, 10.52];
    const chart = cusumChart(x, { centre: 10, sigma: 1 }, { k: 0.5, h: 5, headStart: 0 });
    const first = chart.findIndex((p) => p.signal !== null);
    expect(first).toBe(28); // sample 29
    expect(chart[28].signal).toBe('up');
    expect(chart[28].upper).toBeCloseTo(5.28, 2);
    expect(chart[28].upperRun).toBe(7);
    expect(chart[28].estimatedMeanUp!).toBeCloseTo(11.25, 2);
    expect(chart[4].upper).toBeCloseTo(2.82, 2); // sample 5: 1.16 + 1.66
    expect(chart.some((p) => p.lower > 5)).toBe(false);
  });

  it('works in the metric unit through σ, and the head start shortens detection', () => {
    const values = Array.from({ length: 12 }, () => 361); // μ₀ = 359 °C, σ = 2 °C: every lot is +1σ
    const plain = cusumChart(values, { centre: 359, sigma: 2 }, { k: 0.5, h: 4, headStart: 0 });
    const fir = cusumChart(values, { centre: 359, sigma: 2 }, { k: 0.5, h: 4, headStart: 2 });
    // y = +1σ each lot: C⁺ grows 0.5 per lot → exceeds 4 at lot 9 (4.5); from the head start 2 at lot 5 (4.5).
    expect(plain.findIndex((p) => p.signal === 'up')).toBe(8);
    expect(fir.findIndex((p) => p.signal === 'up')).toBe(4);
    // The head start counts as one non-zero period, so N⁺ = 6 at lot 5 and μ̂ = 359 + 2·(0.5 + 4.5/6).
    expect(fir[4].estimatedMeanUp!).toBeCloseTo(359 + 2 * (0.5 + 4.5 / 6), 10);
  });
});
