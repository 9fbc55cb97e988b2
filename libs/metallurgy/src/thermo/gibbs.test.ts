import { describe, expect, it } from 'vitest';
import { magneticF, magneticGibbs } from './magnetic.js';
import { gibbsBcc, gibbsFcc, solutionAt, thermoSiteFractions, gibbsAtSiteFraction, gibbsDerivative } from './solution.js';
import { fccFeMinusBcc, ghserC, ghserFe } from './unaries.js';
import { pureIronFccMinusBcc } from './fe-c.js';
import { phaseParameters } from './parameters.js';

// Unit-level regression values of metallurgy.md §8.1 ([C], computed regression values with the §2 parameter set;
// ±0.5 J/mol). They catch the AFM-factor and Redlich–Kister-order traps of §9.4.
describe('SGTE unaries and the magnetic model (metallurgy.md §8.1 unit-level values [C], ±0.5 J/mol)', () => {
  it('GHSERFE(298.15) = −1841.40 (non-magnetic part)', () => {
    expect(Math.abs(ghserFe(298.15) - -1841.4)).toBeLessThanOrEqual(0.5);
  });
  it('GFCCFE − GHSERFE at 1000 K = −484.32', () => {
    expect(Math.abs(fccFeMinusBcc(1000) - -484.32)).toBeLessThanOrEqual(0.5);
  });
  it('GHSERCC(1000) = −12658.89', () => {
    expect(Math.abs(ghserC(1000) - -12658.89)).toBeLessThanOrEqual(0.5);
  });
  it('G_mag of bcc Fe at 300/700/1000/1100 K = −6274.34 / −2690.70 / −822.07 / −537.03', () => {
    const expected: Array<[number, number]> = [
      [300, -6274.34],
      [700, -2690.7],
      [1000, -822.07],
      [1100, -537.03],
    ];
    for (const [T, g] of expected) expect(Math.abs(magneticGibbs(T, 1043, 2.22, 'bcc') - g), `${T} K`).toBeLessThanOrEqual(0.5);
  });
  it('G_fcc − G_bcc of pure Fe (magnetism included) at 300…1100 K', () => {
    const expected: Array<[number, number]> = [
      [300, 5386.3],
      [500, 3666.3],
      [700, 2065.7],
      [900, 776.8],
      [1000, 337.7],
      [1100, 100.4],
    ];
    for (const [T, d] of expected) expect(Math.abs(pureIronFccMinusBcc(T) - d), `${T} K`).toBeLessThanOrEqual(0.5);
  });
  it('magnetic f(τ) closed forms equal the expanded coefficients printed in §2.1', () => {
    // bcc p = 0.40 and fcc p = 0.28 coefficient lists of metallurgy.md §2.1 [F2]
    const bccBelow = (t: number) => 1 - 0.905299383 / t - 0.153008346 * t ** 3 - 0.00680037095 * t ** 9 - 0.00153008346 * t ** 15;
    const bccAbove = (t: number) => -0.0641731208 * t ** -5 - 0.00203724193 * t ** -15 - 4.27820805e-4 * t ** -25;
    const fccBelow = (t: number) => 1 - 0.860338755 / t - 0.17449124 * t ** 3 - 0.00775516624 * t ** 9 - 0.0017449124 * t ** 15;
    const fccAbove = (t: number) => -0.0426902268 * t ** -5 - 0.0013552453 * t ** -15 - 2.84601512e-4 * t ** -25;
    for (const t of [0.3, 0.7, 0.99]) {
      expect(magneticF(t, 'bcc')).toBeCloseTo(bccBelow(t), 8);
      expect(magneticF(t, 'fcc')).toBeCloseTo(fccBelow(t), 8);
    }
    for (const t of [1, 1.3, 3]) {
      expect(magneticF(t, 'bcc')).toBeCloseTo(bccAbove(t), 8);
      expect(magneticF(t, 'fcc')).toBeCloseTo(fccAbove(t), 8);
    }
  });
  it('AFM factor: fcc Fe TC −201, β −2.1 act as 67 K and 0.7 (§2.1); zero or negative after division gives no term', () => {
    expect(magneticGibbs(500, -201, -2.1, 'fcc')).toBeCloseTo(magneticGibbs(500, 67, 0.7, 'fcc'), 10);
    expect(magneticGibbs(500, -311.5, -0.008, 'bcc')).toBeCloseTo(magneticGibbs(500, 311.5, 0.008, 'bcc'), 10);
    expect(magneticGibbs(500, 0, 2, 'bcc')).toBe(0);
    expect(magneticGibbs(500, 1000, 0, 'bcc')).toBe(0);
  });
});

describe('Fe–C solutions per mole of formula unit at 673.15 K (metallurgy.md §8.1 [C], ±0.5 J/mol)', () => {
  const fe = { C: 0 };
  // y_C = u (fcc) and u/3 (bcc); x_C = u/(1 + u)
  it('G_fcc(y_C = 0.05) = −20550.90 and G_fcc(0) = −20823.31', () => {
    expect(Math.abs(gibbsFcc(fe, 0.05 / 1.05, 673.15) - -20550.9)).toBeLessThanOrEqual(0.5);
    expect(Math.abs(gibbsFcc(fe, 0, 673.15) - -20823.31)).toBeLessThanOrEqual(0.5);
  });
  it('G_bcc(y_C = 0.01) = −21744.63 and G_bcc(0) = −23090.61', () => {
    expect(Math.abs(gibbsBcc(fe, 0.03 / 1.03, 673.15) - -21744.63)).toBeLessThanOrEqual(0.5);
    expect(Math.abs(gibbsBcc(fe, 0, 673.15) - -23090.61)).toBeLessThanOrEqual(0.5);
  });
});

describe('solution model internals', () => {
  it('the alloy carbon content does not enter the substitutional site fractions beyond the Fe balance', () => {
    const y = thermoSiteFractions({ C: 0.4, Mn: 2 });
    expect(y[0] + y[1]).toBeCloseTo(1, 12);
    expect(y[1]).toBeCloseTo(2 / 54.938 / (2 / 54.938 + 97.6 / 55.845), 12);
  });
  it('elements without parameters count as Fe', () => {
    const y = thermoSiteFractions({ C: 0.4, Co: 1 });
    expect(y[0]).toBe(1);
  });
  it('analytic dG/dy_C equals a central difference (magnetism included), both phases', () => {
    const y = thermoSiteFractions({ C: 0.4, Mn: 1.5, Ni: 1, Cr: 1, Si: 1.5, Mo: 0.3, Al: 0.5 });
    for (const phase of ['fcc', 'bcc'] as const) {
      for (const T of [600, 900, 1100]) {
        const s = solutionAt(phase, y, T);
        for (const yC of [0.001, 0.02, 0.08]) {
          const h = 1e-5 * yC;
          const numeric = (gibbsAtSiteFraction(s, yC + h) - gibbsAtSiteFraction(s, yC - h)) / (2 * h);
          expect(Math.abs(gibbsDerivative(s, yC) - numeric)).toBeLessThan(0.01);
        }
      }
    }
  });
  it('Redlich–Kister pairs are written in alphabetical (TDB) order, e.g. CR,FE and AL,FE (§2.1 trap)', () => {
    for (const phase of ['fcc', 'bcc'] as const) {
      for (const b of phaseParameters(phase).binaries) {
        expect([...b.pair].map((s) => s.toUpperCase())).toEqual([...b.pair].map((s) => s.toUpperCase()).sort());
      }
    }
  });
  it('Fe–10Cr fcc at 1000 K equals a hand-assembled G with the CR,FE order (y_Cr − y_Fe) – §2.1 trap', () => {
    const T = 1000;
    const y = thermoSiteFractions({ C: 0, Cr: 10 });
    const yFe = y[0];
    const yCr = y[4];
    const R = 8.31451;
    // Andersson & Sundman 1987 (§2.4 [F2]): L0 = 10833 − 7.477T, L1 = 1410; fcc Cr = GHSERCR + 7284 + 0.163T, TC −1109, β −2.46.
    const ghserCr = -8856.94 + 157.48 * T - 26.908 * T * Math.log(T) + 0.00189435 * T * T - 1.47721e-6 * T ** 3 + 139250 / T;
    const excess = yCr * yFe * (10833 - 7.477 * T + 1410 * (yCr - yFe));
    const tc = yFe * -201 + yCr * -1109;
    const beta = yFe * -2.1 + yCr * -2.46;
    const expected =
      yFe * (ghserFe(T) + fccFeMinusBcc(T)) +
      yCr * (ghserCr + 7284 + 0.163 * T) +
      R * T * (yFe * Math.log(yFe) + yCr * Math.log(yCr)) +
      excess +
      magneticGibbs(T, tc, beta, 'fcc');
    expect(gibbsFcc({ C: 0, Cr: 10 }, 0, T)).toBeCloseTo(expected, 6);
    // the reversed order would be off by 2·y_Cr·y_Fe·1410·(y_Fe − y_Cr) ≈ 190 J/mol – far outside the tolerance
    expect(Math.abs(2 * yCr * yFe * 1410 * (yFe - yCr))).toBeGreaterThan(100);
  });
});
