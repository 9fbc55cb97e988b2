import { describe, expect, it } from 'vitest';
import {
  bainiteDislocationDensity,
  bainitePlateThicknessUm,
  bainiticFerriteYieldMPa,
  graphiteVolumeFraction,
  hvFromHrcExtended,
  martensiteHrcA255,
  maynierFerritePearliteHV,
  mixtureHardnessHV,
} from './properties.js';

describe('published hardness relations', () => {
  it('Maynier ferrite + pearlite hardness for 4340', () => {
    // [C] metallurgy.md §8.6 (Maynier, Dollet & Bastien 1978 as printed in Li 1998): Vr = 3600 / 36000 / 360000 °C/h →
    // HV_F+P = 266 / 284 / 303 (rounded; ±1).
    const c4340 = { C: 0.4, Si: 0.25, Mn: 0.7, Ni: 1.8, Cr: 0.8, Mo: 0.25 };
    expect(Math.abs(maynierFerritePearliteHV(c4340, 3600) - 266)).toBeLessThanOrEqual(1);
    expect(Math.abs(maynierFerritePearliteHV(c4340, 36000) - 284)).toBeLessThanOrEqual(1);
    expect(Math.abs(maynierFerritePearliteHV(c4340, 360000) - 303)).toBeLessThanOrEqual(1);
  });

  it('A255 as-quenched martensite hardness rises with carbon and is clamped to its 0.1–0.7 wt% range', () => {
    // ASTM A255-10(2014) HRC_M polynomial via metallurgy.md §6.2 [F2]; 56.3 at 0.4 C is [C] (computed from that polynomial here,
    // a regression value, not an outside measurement).
    expect(martensiteHrcA255(0.4)).toBeCloseTo(56.3, 1);
    expect(martensiteHrcA255(0.2)).toBeLessThan(martensiteHrcA255(0.4));
    expect(martensiteHrcA255(1.2)).toBe(martensiteHrcA255(0.7));
    // ASTM E140 row HRC 50 ↔ HV 513 (metallurgy.md §6.4 / §8.6 [F2]); past its last row (HRC 60 ↔ HV 697) the
    // extension keeps rising (our extrapolation, used only for fresh martensite).
    expect(hvFromHrcExtended(50)).toBe(513);
    expect(hvFromHrcExtended(65)).toBeGreaterThan(697);
  });
});

describe('component strength model of bainitic ferrite (coefficients from memory, metallurgy.md §6.3)', () => {
  it('plate thickness and dislocation density at the quoted points', () => {
    // [M] Singh & Bhadeshia 1998 points: 0.2 µm at 400 °C, 0.1 µm at 300 °C; Takahashi & Bhadeshia 1990 ρ(673 K) ≈ 3.8e15 m⁻².
    expect(bainitePlateThicknessUm(400)).toBeCloseTo(0.2, 9);
    expect(bainitePlateThicknessUm(300)).toBeCloseTo(0.1, 9);
    expect(bainiteDislocationDensity(400) / 3.8e15).toBeGreaterThan(0.95);
    expect(bainiteDislocationDensity(400) / 3.8e15).toBeLessThan(1.05);
  });

  it('lower formation temperature gives stronger ferrite; Si and Mn add solid-solution strength', () => {
    const chem = { Si: 1.6, Mn: 0.8 };
    expect(bainiticFerriteYieldMPa(chem, 300, 0.03)).toBeGreaterThan(bainiticFerriteYieldMPa(chem, 380, 0.03));
    expect(bainiticFerriteYieldMPa({ Si: 2, Mn: 0.8 }, 300, 0.03) - bainiticFerriteYieldMPa(chem, 300, 0.03)).toBeCloseTo(0.4 * 83, 9);
  });

  it('mixture is linear in the volume fractions', () => {
    const h = { bainiticFerriteHV: 600, austeniteHV: 300, martensiteHV: 800, upperProductsHV: 250 };
    expect(mixtureHardnessHV({ bainiticFerrite: 1, austenite: 0, freshMartensite: 0, bathMartensite: 0, upperProducts: 0 }, h)).toBe(600);
    expect(mixtureHardnessHV({ bainiticFerrite: 0.5, austenite: 0.3, freshMartensite: 0.1, bathMartensite: 0, upperProducts: 0.1 }, h)).toBeCloseTo(300 + 90 + 80 + 25, 9);
  });

  it('graphite fraction of a ductile iron: ≈ 9 vol% for 3.6 C with 0.8 C in the matrix', () => {
    // [C] from densities 2.2 (graphite) and 7.6 g/cm³ (matrix) [M].
    expect(graphiteVolumeFraction(3.6, 0.8)).toBeCloseTo(0.0905, 3);
    expect(graphiteVolumeFraction(0.6, 0.6)).toBe(0);
  });
});
