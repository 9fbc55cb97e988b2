import { describe, expect, it } from 'vitest';
import { batchModel } from '../ensemble.js';
import { liRate, liRateAt, liS } from '../kinetics/li1998.js';
import type { BatchSetup } from '../setup.js';
import {
  additiveSumAlongCentre,
  centreExcessTable,
  CORE_AT_BATH_MARGIN_C,
  equilibriumFerriteFraction,
  extentFromAdditiveSum,
  upperProductsFraction,
  type QuenchHistory,
} from './quench.js';
import { computeQuenchSummary, memberQuench, quenchHistory } from './quenchSummary.js';

const base: BatchSetup = {
  material: 'steel',
  chemistryWtPct: { C: 0.6, Si: 1.6, Mn: 0.8, Cr: 0.5, Mo: 0.2 },
  grainSizeAstm: 8,
  section: { shape: 'cylinder', diameterMm: 10 },
  austenitize: { tempC: 880, minutes: 20 },
  transferS: 6,
  agitation: 'moderate',
  ambientC: 20,
  uncertainty: { samples: 30, seed: 2 },
};

describe('quench leg', () => {
  it('bigger sections and weaker agitation reach the bath later', () => {
    const core = (s: Partial<BatchSetup>) => quenchHistory(batchModel({ ...base, ...s }), 300).coreReachesBathS as number;
    const d10 = core({});
    const d30 = core({ section: { shape: 'cylinder', diameterMm: 30 } });
    const still = core({ agitation: 'still' });
    expect(d30).toBeGreaterThan(2 * d10);
    expect(still).toBeGreaterThan(d10);
    // a plate cools more slowly than a round of the same size, a sphere faster
    expect(core({ section: { shape: 'plate', thicknessMm: 10 } })).toBeGreaterThan(d10);
    expect(core({ section: { shape: 'sphere', diameterMm: 10 } })).toBeLessThan(d10);
  });

  it('the centre and surface histories start at the austenitizing temperature and end within the margin of the bath', () => {
    const h = quenchHistory(batchModel(base), 300);
    expect(h.tS[0]).toBe(-base.transferS);
    expect(h.centreC[0]).toBe(880);
    expect(h.surfaceC[3]).toBeLessThan(h.centreC[3]);
    const i = h.tS.findIndex((t) => t >= (h.coreReachesBathS as number));
    expect(h.centreC[i] - 300).toBeLessThanOrEqual(CORE_AT_BATH_MARGIN_C + 0.5);
    expect(h.centreC[i - 2] - 300).toBeGreaterThan(CORE_AT_BATH_MARGIN_C);
  });

  it('the centre excess table starts high and decays to zero', () => {
    const q = computeQuenchSummary(batchModel(base), 300);
    expect(q.excess.excessC[0]).toBeGreaterThan(300);
    expect(q.excess.excessC[q.excess.excessC.length - 1]).toBe(0);
    for (let i = 1; i < q.excess.excessC.length; i++) expect(q.excess.excessC[i]).toBeLessThanOrEqual(q.excess.excessC[i - 1] + 1e-9);
  });

  it('ferrite/pearlite risk grows with the section (Scheil sums of Li 1998 times along the centre path)', () => {
    const small = computeQuenchSummary(batchModel(base), 300);
    const large = computeQuenchSummary(batchModel({ ...base, section: { shape: 'cylinder', diameterMm: 60 } }), 300);
    expect(large.pearliteSumByZ[1]).toBeGreaterThan(small.pearliteSumByZ[1]);
    expect(large.ferriteSumByZ[1]).toBeGreaterThan(small.ferriteSumByZ[1]);
    // a higher h (z = +1) gives a smaller sum
    expect(small.pearliteSumByZ[2]).toBeLessThan(small.pearliteSumByZ[0]);
  });

  it('member spread: upper products and core time vary, the nominal member equals the nominal run', () => {
    const model = batchModel({ ...base, section: { shape: 'cylinder', diameterMm: 30 } });
    const q = computeQuenchSummary(model, 300);
    const mq = memberQuench(model, q);
    expect(mq.coreReachesBathS[0]).toBe(q.coreReachesBathSByZ[1]);
    const up = Array.from(mq.upperProducts);
    expect(Math.max(...up)).toBeGreaterThan(Math.min(...up));
    expect(mq.pearliteOnsetIndex[0]).toBeCloseTo(q.pearliteSumByZ[1] / liS(0.01), 9);
  });
});

describe('additive sums', () => {
  it('a constant path gives Δt/τ̂ (exact for Li’s separable τ)', () => {
    const rate = liRate('pearlite', { C: 0.6, Mn: 0.8 }, 8, 720);
    const h: QuenchHistory = { tS: [0, 10, 20, 30], centreC: [600, 600, 600, 600], surfaceC: [600, 600, 600, 600], coreReachesBathS: 30 };
    expect(additiveSumAlongCentre(h, rate)).toBeCloseTo(30 * liRateAt(rate, 600), 12);
    const e = extentFromAdditiveSum(liS(0.01));
    expect(e.onsetIndex).toBeCloseTo(1, 12);
    expect(e.extent).toBeCloseTo(0.01, 6);
  });

  it('equilibrium ferrite by the Fe–C lever (0.02 / 0.77 wt%) and the combination of products', () => {
    // Fe–C eutectoid 0.77 wt% and ferrite 0.02 wt% (handbook Fe–C diagram; metallurgy.md §8.1).
    expect(equilibriumFerriteFraction(0.02)).toBe(1);
    expect(equilibriumFerriteFraction(0.395)).toBeCloseTo(0.5, 12);
    expect(equilibriumFerriteFraction(0.9)).toBe(0);
    expect(upperProductsFraction(1, 1, 0.3)).toBe(1);
    expect(upperProductsFraction(0.1, 0, 0.5)).toBeCloseTo(0.05, 12);
  });

  it('excess table handles a part that is already at the bath', () => {
    const h: QuenchHistory = { tS: [0, 1, 2], centreC: [300, 300, 300], surfaceC: [300, 300, 300], coreReachesBathS: 0 };
    const t = centreExcessTable(h, 300);
    expect(t.excessC.every((x) => x === 0)).toBe(true);
  });
});
