import { describe, expect, it } from 'vitest';
import { SeededRandom } from '../random.js';
import type { BatchSetup } from '../setup.js';
import { t0PrimeCarbonWtPct } from '../thermo/index.js';
import { advanceBath, bathProgress, createBathState, type BathState } from './bath.js';
import { liBainiteStartC, liExtentFromSum, liIsothermalTimeS, liRate, liS } from './li1998.js';

const springSteel = { C: 0.6, Si: 1.6, Mn: 0.8, Cr: 0.3, Mo: 0.1 };

function setup(overrides: Partial<BatchSetup> = {}): BatchSetup {
  return {
    material: 'steel',
    chemistryWtPct: springSteel,
    grainSizeAstm: 8,
    section: { shape: 'plate', thicknessMm: 2 },
    austenitize: { tempC: 880, minutes: 20 },
    transferS: 3,
    agitation: 'strong',
    ambientC: 20,
    uncertainty: { samples: 40, seed: 11 },
    ...overrides,
  };
}

function bathLog(durationS: number, temp: (t: number) => number, stepS = 1): Array<[number, number]> {
  const out: Array<[number, number]> = [];
  for (let t = 0; t <= durationS; t += stepS) out.push([t, temp(t)]);
  return out;
}

const noisy = (t: number) => 300 + 2 * Math.sin(t / 83) + 0.4 * Math.sin(t * 1.7);

describe('bath state: incremental equals from scratch', () => {
  it('advancing in random pieces, with a JSON round trip between pieces, gives the same kinetics (tolerance 1e−12; exact in practice)', () => {
    const s = setup();
    const log = bathLog(3 * 3600, noisy);
    const whole = advanceBath(createBathState(s), log);
    const rng = new SeededRandom(3);
    let pieces: BathState = createBathState(s);
    let i = 0;
    while (i < log.length) {
      const n = 1 + rng.nextInt(400);
      pieces = JSON.parse(JSON.stringify(advanceBath(pieces, log.slice(i, i + n)))) as BathState;
      i += n;
    }
    const a = bathProgress(whole);
    const b = bathProgress(pieces);
    const maxDiff = (x: ArrayLike<number>, y: ArrayLike<number>) => {
      expect(x.length).toBe(y.length);
      let d = 0;
      for (let k = 0; k < x.length; k++) d = Math.max(d, Math.abs(x[k] - y[k]));
      return d;
    };
    expect(maxDiff(a.v, b.v)).toBeLessThanOrEqual(1e-12);
    expect(maxDiff(a.sum, b.sum)).toBeLessThanOrEqual(1e-12);
    expect(maxDiff(a.time95S, b.time95S)).toBeLessThanOrEqual(1e-9);
    expect(maxDiff(a.curve, b.curve)).toBeLessThanOrEqual(1e-12);
    expect(pieces.log.sumTempDtCS).toBeCloseTo(whole.log.sumTempDtCS, 6);
    expect(a.v[0]).toBeGreaterThan(0.1); // the comparison is not between two empty states
  });

  it('ignores samples at or before the last one taken in (a re-sent slice is harmless)', () => {
    const s = setup();
    const log = bathLog(1800, noisy);
    const once = advanceBath(createBathState(s), log);
    const twice = advanceBath(advanceBath(createBathState(s), log.slice(0, 1200)), log.slice(600));
    expect(bathProgress(twice).v).toEqual(bathProgress(once).v);
    expect(twice.log.ignored).toBe(600);
  });

  it('does not modify the state it is given', () => {
    const s0 = advanceBath(createBathState(setup()), bathLog(100, noisy));
    const snapshot = JSON.stringify(s0);
    advanceBath(s0, bathLog(200, noisy).slice(101));
    expect(JSON.stringify(s0)).toBe(snapshot);
  });

  it('rejects non-finite and negative times', () => {
    expect(() => advanceBath(createBathState(setup()), [[0, Number.NaN]])).toThrow(/finite/);
    expect(() => advanceBath(createBathState(setup()), [[-1, 300]])).toThrow(/tS/);
  });
});

describe('bath kinetics (nominal member)', () => {
  it('an isothermal hold follows Li additivity exactly and stops at the lever-rule ceiling', () => {
    // Li 1998 eq. 15 additivity: at constant T the extent clock advances by Δt/τ̂ exactly; v = L·S⁻¹(clock) with the
    // lever rule on T0′ (metallurgy.md §3.4) as the cap. The first seconds (the centre still cooling to the bath, where
    // Li's rate is faster) add a small head start `extra` to the clock.
    const s = setup({ uncertainty: { samples: 0, seed: 1 } });
    const log = bathLog(5400, () => 320);
    const rate = liRate('bainite', springSteel, 8, liBainiteStartC(springSteel));
    const tauHat = liIsothermalTimeS(rate, 320, 1) / liS(1);
    const at1800 = bathProgress(advanceBath(createBathState(s), log.slice(0, 1801)));
    const at3600 = bathProgress(advanceBath(createBathState(s), log.slice(0, 3601)));
    expect((at3600.sum[0] - at1800.sum[0]) / (1800 / tauHat)).toBeCloseTo(1, 9);
    const extra = at1800.sum[0] - 1800 / tauHat;
    expect(extra).toBeGreaterThan(0);
    expect(extra * tauHat).toBeLessThan(60); // head start of less than a minute for a 2 mm plate
    const tp = t0PrimeCarbonWtPct(springSteel, 320);
    const lever = (tp - 0.6) / (tp - 0.03);
    expect(at1800.v[0]).toBeCloseTo(lever * liExtentFromSum(at1800.sum[0]), 12);
    const end = bathProgress(advanceBath(createBathState(s), log));
    expect(end.v[0]).toBeCloseTo(lever, 9); // the clock is past S(1): the ceiling is reached and held
    // time to 95 % of the ceiling, interpolated between 20 s cell ends
    expect(Math.abs(end.time95S[0] - (liS(0.95) - extra) * tauHat)).toBeLessThan(20);
  });

  it('cells integrate a fluctuating bath as well as per-second steps (relative 1e−4)', () => {
    const s = setup({ uncertainty: { samples: 0, seed: 1 } });
    // one hour: the extent clock stays below S(1) (where it stops counting), so the sums are comparable
    const log = bathLog(3600, (t) => 310 + 3 * Math.sin(t / 40) + 1.5 * Math.sin(t / 7));
    const ref = bathProgress(advanceBath(createBathState(s, { cellS: 1 }), log));
    expect(ref.sum[0]).toBeLessThan(liS(1));
    for (const cellS of [10, 30, 60]) {
      const p = bathProgress(advanceBath(createBathState(s, { cellS }), log));
      expect(Math.abs(p.sum[0] / ref.sum[0] - 1)).toBeLessThan(1e-4);
      // v ratchets on the ceiling at the current temperature; cells see it at their mean (a cell-length filter on
      // the log's wiggles), per-second cells at every wiggle, so v agrees less tightly than the clock
      expect(Math.abs(p.v[0] / ref.v[0] - 1)).toBeLessThan(1e-2);
    }
  });

  it('stasis: raising the bath above T0′ stops growth without undoing bainite; lowering it again resumes growth', () => {
    const s = setup({ uncertainty: { samples: 0, seed: 1 } });
    // At 530 °C T0′ (≈0.47 wt%) is below the steel's 0.6 wt% C: no bainite possible there (yet below Li's Bs, so the clock runs).
    const profile = (t: number) => (t < 1800 ? 300 : t < 3600 ? 530 : 300);
    const p = bathProgress(advanceBath(createBathState(s), bathLog(5400, profile)));
    const at = (t: number) => p.curve[p.curve.findIndex((x, j) => j % 2 === 0 && x === t) + 1];
    expect(at(1800)).toBeGreaterThan(0.05);
    expect(at(3500)).toBe(at(1900)); // no growth and no reversion while hot
    expect(at(5400)).toBeGreaterThan(at(3500) + 0.02);
    for (let j = 3; j < p.curve.length; j += 2) expect(p.curve[j]).toBeGreaterThanOrEqual(p.curve[j - 2]);
  });
});

describe('ensemble members', () => {
  it('spread around the nominal and are reproducible for a seed', () => {
    const s = setup({ uncertainty: { samples: 200, seed: 5 } });
    const log = bathLog(3600, () => 300);
    const a = bathProgress(advanceBath(createBathState(s), log));
    const b = bathProgress(advanceBath(createBathState(s), log));
    expect(a.v).toEqual(b.v);
    const members = Array.from(a.v.slice(1)).sort((x, y) => x - y);
    expect(members[10]).toBeLessThan(a.v[0]);
    expect(members[189]).toBeGreaterThan(a.v[0]);
    const c = bathProgress(advanceBath(createBathState({ ...s, uncertainty: { samples: 200, seed: 6 } }), log));
    expect(c.v).not.toEqual(a.v);
  });
});
