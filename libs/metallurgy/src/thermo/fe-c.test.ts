import { describe, expect, it } from 'vitest';
import { ae3C } from '../temperatures.js';
import { bccIronHeatCapacity, feCBoundaries, feCEutectoid, gibbsCementite, ironCurieC, paraequilibriumAe3C, pureIronAlphaGammaC, pureIronGammaDeltaC } from './fe-c.js';

describe('pure iron from the SGTE unary data (metallurgy.md §8.1)', () => {
  it('α/γ at 912 °C (handbook value; [C] 911.66 °C with the §2 set), ±1 K', () => {
    expect(Math.abs(pureIronAlphaGammaC() - 912)).toBeLessThanOrEqual(1);
    expect(Math.abs(pureIronAlphaGammaC() - 911.66)).toBeLessThanOrEqual(0.05); // computed regression value [C]
  });
  it('γ/δ at 1394 °C (handbook value; [C] 1394.3 °C), ±2 K', () => {
    expect(Math.abs(pureIronGammaDeltaC() - 1394)).toBeLessThanOrEqual(2);
  });
  it('Curie point of bcc Fe 770 °C (handbook value, metallurgy.md §8.1): the λ peak of the heat capacity −T·∂²G/∂T², ±0.5 K', () => {
    // Derived from GHSERFE + the magnetic term, not read from the TC parameter: a wrong magnetic function moves it.
    expect(Math.abs(ironCurieC() - 770)).toBeLessThanOrEqual(0.5);
  });
  it('the peak is the λ shape of the magnetic term: higher than 50 K either side, and c_p drops > 5 J/(mol K) across it', () => {
    const tc = ironCurieC() + 273.15;
    const peak = bccIronHeatCapacity(tc - 0.05);
    expect(peak).toBeGreaterThan(bccIronHeatCapacity(tc - 50) + 3);
    expect(peak).toBeGreaterThan(bccIronHeatCapacity(tc + 50) + 3);
    expect(peak - bccIronHeatCapacity(tc + 0.2)).toBeGreaterThan(5);
  });
  it('c_p of α-Fe at 298 K ≈ 25.1 J/(mol K) (handbook value, from memory [M]; ±0.5)', () => {
    expect(Math.abs(bccIronHeatCapacity(298.15) - 25.1)).toBeLessThanOrEqual(0.5);
  });
});

describe('Fe–C (Fe–Fe3C) diagram, handbook values with the §8.1 tolerances', () => {
  const eut = feCEutectoid();
  it('eutectoid at 727 °C ±3 K (handbook Fe–C diagram; [C] 726.6 °C)', () => {
    expect(Math.abs(eut.tempC - 727)).toBeLessThanOrEqual(3);
  });
  it('eutectoid austenite 0.76–0.77 wt% C, ±0.03 (handbook; [C] 0.761 wt%, x = 0.0344)', () => {
    expect(Math.abs(eut.austeniteCarbonWtPct - 0.765)).toBeLessThanOrEqual(0.03);
    expect(Math.abs(eut.austeniteCarbonMoleFraction - 0.0344)).toBeLessThanOrEqual(0.0001);
  });
  it('maximum carbon in ferrite ≈ 0.022 wt% at the eutectoid, ±0.004 ([C] 0.019 wt%, x = 8.85e−4)', () => {
    expect(Math.abs(eut.ferriteCarbonWtPct - 0.022)).toBeLessThanOrEqual(0.004);
    expect(Math.abs(eut.ferriteCarbonMoleFraction - 8.85e-4)).toBeLessThanOrEqual(0.01e-4);
  });
  it('austenite saturated with cementite at the eutectic 1147 °C ≈ 2.1 wt%, ±0.1 ([C] 2.05 wt%)', () => {
    expect(Math.abs(feCBoundaries(1147).austeniteCementite!.austeniteCarbonWtPct - 2.1)).toBeLessThanOrEqual(0.1);
  });
  it('Acm at 900 °C = 1.23 wt% ±0.05 ([C] computed regression value)', () => {
    expect(Math.abs(feCBoundaries(900).austeniteCementite!.austeniteCarbonWtPct - 1.23)).toBeLessThanOrEqual(0.05);
  });
  it('α/γ at 800 °C: γ side 0.341 ±0.03, α side 0.0120 ±0.003 wt% ([C] computed regression values)', () => {
    const ag = feCBoundaries(800).ferriteAustenite!;
    expect(Math.abs(ag.austeniteCarbonWtPct - 0.341)).toBeLessThanOrEqual(0.03);
    expect(Math.abs(ag.ferriteCarbonWtPct - 0.012)).toBeLessThanOrEqual(0.003);
    expect(ag.metastable).toBe(false);
  });
  it('no α/γ equilibrium above the pure-iron α/γ point; metastable below the eutectoid', () => {
    expect(feCBoundaries(950).ferriteAustenite).toBeNull();
    expect(feCBoundaries(700).ferriteAustenite?.metastable).toBe(true);
  });
  it('graphite is the stable carbon phase: austenite saturates at less carbon with graphite than with cementite', () => {
    for (const T of [800, 900, 1000, 1100]) {
      const b = feCBoundaries(T);
      expect(b.austeniteGraphite!.austeniteCarbonWtPct).toBeLessThan(b.austeniteCementite!.austeniteCarbonWtPct);
    }
  });
  it('shape of the diagram: A3 falls and Acm rises with carbon/temperature as drawn in the handbook', () => {
    const a780 = feCBoundaries(780).ferriteAustenite!.austeniteCarbonWtPct;
    const a850 = feCBoundaries(850).ferriteAustenite!.austeniteCarbonWtPct;
    expect(a780).toBeGreaterThan(a850); // A3 line: more carbon at lower temperature
    expect(feCBoundaries(1000).austeniteCementite!.austeniteCarbonWtPct).toBeGreaterThan(feCBoundaries(800).austeniteCementite!.austeniteCarbonWtPct);
    // ferrite solvus against cementite falls to a few ppm at room-temperature-side temperatures
    expect(feCBoundaries(400).ferriteCementite!.ferriteCarbonWtPct).toBeLessThan(0.001);
  });
  it('cementite energy is the full G of Fe3C vs SER (§9.5 trap): ≈ −120 kJ per Fe3C at 1000 K, not ≈ +100 kJ shifted', () => {
    // Gustafson 1985 (§2.3 [F2]) evaluated by hand: −10745 + 706.04·1000 − 120.6·1000·ln 1000
    expect(gibbsCementite(1000)).toBeCloseTo(-10745 + 706040 - 120600 * Math.log(1000), 6);
  });
});

describe('para-equilibrium Ae3 (CALPHAD α/γ at fixed substitutional ratios)', () => {
  it('Fe–C: is the A3 line – 0.341 wt% C gives 800 °C (§8.1 [C] α/γ at 800 °C), ±0.5 K', () => {
    expect(Math.abs(paraequilibriumAe3C({ C: 0.341 }) - 800)).toBeLessThanOrEqual(0.5);
  });
  it('Fe–C: carbon-free iron gives the pure-iron α/γ point; 0.4 C lies within 10 K of the Andrews Ae3 (handbook A3 ≈ 790 °C)', () => {
    expect(paraequilibriumAe3C({ C: 0 })).toBeCloseTo(pureIronAlphaGammaC(), 3);
    expect(Math.abs(paraequilibriumAe3C({ C: 0.4 }) - ae3C({ C: 0.4 }))).toBeLessThan(10);
  });
  it('Si raises it, Mn and Ni lower it', () => {
    const base = paraequilibriumAe3C({ C: 0.4 });
    expect(paraequilibriumAe3C({ C: 0.4, Si: 1.5 })).toBeGreaterThan(base);
    expect(paraequilibriumAe3C({ C: 0.4, Mn: 1.5 })).toBeLessThan(base);
    expect(paraequilibriumAe3C({ C: 0.4, Ni: 1.5 })).toBeLessThan(base);
  });
  it('rejects a non-finite temperature in feCBoundaries', () => {
    expect(() => feCBoundaries(Number.NaN)).toThrow(RangeError);
  });
});
