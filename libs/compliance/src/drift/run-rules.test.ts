import { describe, expect, it } from 'vitest';
import { monteCarloArl } from './arl.js';
import { evaluateRunRules, type NelsonRule, type WesternElectricRule } from './run-rules.js';

// Series are written as standardized values z (centre 0, σ 1) so each pattern is visible at a glance.
const we = (rule: WesternElectricRule, z: number[]) => evaluateRunRules(z, 0, 1, { westernElectric: [rule], nelson: [] });
const nelson = (rule: NelsonRule, z: number[]) => evaluateRunRules(z, 0, 1, { westernElectric: [], nelson: [rule] });

describe('Western Electric rules', () => {
  it('WE1: a point beyond 3σ, strictly', () => {
    expect(we(1, [0, 3, -3]).length).toBe(0);
    const s = we(1, [0, 3.01, -3.2]);
    expect(s.map((x) => [x.index, x.direction])).toEqual([[1, 'up'], [2, 'down']]);
    expect(s[0].pointIndices).toEqual([1]);
  });

  it('WE2: 2 of 3 beyond 2σ on the same side, signalling at the second', () => {
    expect(we(2, [2.5, 0, 2.1]).map((x) => x.index)).toEqual([2]);
    expect(we(2, [2.5, 0, 2.1])[0].pointIndices).toEqual([0, 1, 2]);
    expect(we(2, [2.5, 0, 0, 2.1]).length).toBe(0); // 2 of 4 is not 2 of 3
    expect(we(2, [2.5, -2.5, 0]).length).toBe(0); // opposite sides
    // At the start of a series, 2 of the first 2 is already 2 of 3.
    expect(we(2, [-2.2, -2.3]).map((x) => [x.direction, x.pointIndices])).toEqual([['down', [0, 1]]]);
  });

  it('WE3: 4 of 5 beyond 1σ on the same side', () => {
    expect(we(3, [1.5, 1.2, 0.3, 1.1, 1.9]).map((x) => [x.index, x.direction])).toEqual([[4, 'up']]);
    expect(we(3, [1.5, 1.2, 0.3, 0.9, 1.9]).length).toBe(0); // only 3 of 5
  });

  it('WE4: 8 in a row on one side; a point on the centre line breaks the run', () => {
    const eight = [0.1, 0.5, 0.2, 0.9, 0.3, 0.4, 0.2, 0.1];
    expect(we(4, eight).map((x) => x.index)).toEqual([7]);
    expect(we(4, [...eight, 0.3]).map((x) => x.index)).toEqual([7, 8]); // every point while the run lasts
    expect(we(4, eight.slice(0, 7)).length).toBe(0);
    expect(we(4, [0.1, 0.5, 0.2, 0, 0.3, 0.4, 0.2, 0.1, 0.2]).length).toBe(0);
  });
});

describe('Nelson rules', () => {
  it('N2: 9 in a row on one side (8 is not enough)', () => {
    expect(nelson(2, Array(9).fill(-0.2)).map((x) => [x.index, x.direction])).toEqual([[8, 'down']]);
    expect(nelson(2, Array(8).fill(-0.2)).length).toBe(0);
  });

  it('N3: 6 in a row steadily rising or falling; a tie breaks the trend', () => {
    expect(nelson(3, [-1, -0.5, 0, 0.2, 0.4, 1.1]).map((x) => [x.index, x.direction])).toEqual([[5, 'up']]);
    expect(nelson(3, [1, 0.5, 0, -0.2, -0.4, -1.1])[0].direction).toBe('down');
    expect(nelson(3, [-1, -0.5, 0, 0, 0.4, 1.1]).length).toBe(0);
    expect(nelson(3, [-1, -0.5, 0, 0.2, 0.4]).length).toBe(0);
  });

  it('N4: 14 in a row alternating up and down', () => {
    const alt14 = Array.from({ length: 14 }, (_, i) => (i % 2 === 0 ? 0.3 : -0.3));
    const s = nelson(4, alt14);
    expect(s.map((x) => [x.index, x.direction])).toEqual([[13, 'none']]);
    expect(s[0].pointIndices.length).toBe(14);
    expect(nelson(4, alt14.slice(0, 13)).length).toBe(0);
    const broken = [...alt14];
    broken[7] = broken[6]; // a tie
    expect(nelson(4, broken).length).toBe(0);
  });

  it('N5 and N6 are the 2-of-3 and 4-of-5 rules', () => {
    expect(nelson(5, [2.5, 0, 2.1]).map((x) => x.index)).toEqual([2]);
    expect(nelson(6, [-1.5, -1.2, 0.3, -1.1, -1.9]).map((x) => x.direction)).toEqual(['down']);
  });

  it('N7: 15 in a row within 1σ (stratification)', () => {
    const hugging: number[] = Array.from({ length: 15 }, (_, i) => (i % 3 === 0 ? 0.5 : -0.4));
    expect(nelson(7, hugging).map((x) => [x.index, x.direction])).toEqual([[14, 'none']]);
    const withOneOut = [...hugging];
    withOneOut[6] = 1.2;
    expect(nelson(7, withOneOut).length).toBe(0);
  });

  it('N8: 8 in a row with none within 1σ (mixture)', () => {
    const mixture = [1.5, -1.3, 1.8, -2.1, 1.2, -1.4, 1.6, -1.1];
    expect(nelson(8, mixture).map((x) => [x.index, x.direction])).toEqual([[7, 'none']]);
    expect(nelson(8, Array(8).fill(1.5))[0].direction).toBe('up');
    const oneInside = [...mixture];
    oneInside[3] = -0.9;
    expect(nelson(8, oneInside).length).toBe(0);
  });

  it('reports rule, rule set and description, oldest point first', () => {
    const s = evaluateRunRules([10, 10, 16.5], 10, 2, { westernElectric: [1], nelson: [1] });
    expect(s.map((x) => `${x.ruleSet}:${x.rule}`)).toEqual(['western-electric:WE1', 'nelson:N1']);
    expect(s[0].description).toBe('one point beyond 3σ');
  });
});

describe('run-rule false-alarm rates', () => {
  it('WE4 alone: in-control ARL 2⁸ − 1 = 255 (runs of a fair coin)', () => {
    // Each point is above or below the centre with probability ½, independently, so the wait for 8 alike
    // in a row is 2⁸ − 1 = 255 (the classical run-of-successes result, Feller vol. I §XIII.7) [C].
    const mc = monteCarloArl({ charts: [], runRules: { westernElectric: [4], nelson: [] }, shift: 0, runs: 3000, seed: 404 });
    expect(Math.abs(mc.arl - 255) / mc.standardError).toBeLessThan(3);
  });

  it('Western Electric rules 1–4 together: in-control ARL ≈ 91.75', () => {
    // Champ & Woodall (1987, Technometrics 29, 393–399), Markov-chain ARL of the Shewhart chart with
    // the four Western Electric rules: 91.75 (from memory; practice.md §4.5 [S59] says "about 1 in 92").
    // Tolerance: 3 Monte-Carlo standard errors plus 2% for the recalled value.
    const mc = monteCarloArl({ charts: [], runRules: { westernElectric: [1, 2, 3, 4], nelson: [] }, shift: 0, runs: 6000, seed: 1987 });
    expect(Math.abs(mc.arl - 91.75)).toBeLessThan(3 * mc.standardError + 0.02 * 91.75);
  });
});
