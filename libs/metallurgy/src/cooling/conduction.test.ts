import { describe, expect, it } from 'vitest';
import {
  airTransferHeatTransfer,
  bathHeatTransferWPerM2K,
  constantProperties,
  equivalentRoundDiameterMm,
  solveConduction,
  STEEL_AUSTENITE_PROPERTIES,
  type SectionShape,
} from './conduction.js';

// ---- exact series solutions (Carslaw & Jaeger; Incropera ch. 5), used to verify the finite-volume solver ----

/** Bessel J0/J1 by the integral J_n(x) = (1/π)∫_0^π cos(nτ − x sin τ) dτ (Simpson, 400 panels). */
function besselJ(n: number, x: number): number {
  const panels = 400;
  const h = Math.PI / panels;
  let s = 0;
  for (let i = 0; i <= panels; i++) {
    const tau = i * h;
    const w = i === 0 || i === panels ? 1 : i % 2 ? 4 : 2;
    s += w * Math.cos(n * tau - x * Math.sin(tau));
  }
  return (s * h) / 3 / Math.PI;
}

/** n-th positive root of f on (lo, hi) intervals, by scanning and bisection. */
function roots(f: (z: number) => number, count: number, from: number, to: number): number[] {
  const out: number[] = [];
  const step = 4e-3;
  let a = from;
  let fa = f(a);
  for (let b = from + step; b < to && out.length < count; b += step) {
    const fb = f(b);
    if (Number.isFinite(fa) && Number.isFinite(fb) && fa * fb < 0 && Math.abs(fa - fb) < 10) {
      let lo = a;
      let hi = b;
      for (let i = 0; i < 60; i++) {
        const mid = 0.5 * (lo + hi);
        if (f(lo) * f(mid) <= 0) hi = mid;
        else lo = mid;
      }
      out.push(0.5 * (lo + hi));
    }
    a = b;
    fa = fb;
  }
  return out;
}

function seriesModes(shape: SectionShape, bi: number, count = 30): Array<{ zeta: number; c: number }> {
  if (shape === 'plate') {
    // ζ tan ζ = Bi, C = 4 sin ζ / (2ζ + sin 2ζ)
    const z = roots((x) => x * Math.sin(x) - bi * Math.cos(x), count, 1e-6, 200);
    return z.map((zeta) => ({ zeta, c: (4 * Math.sin(zeta)) / (2 * zeta + Math.sin(2 * zeta)) }));
  }
  if (shape === 'cylinder') {
    // ζ J1(ζ) = Bi J0(ζ), C = (2/ζ) J1/(J0² + J1²)
    const z = roots((x) => x * besselJ(1, x) - bi * besselJ(0, x), count, 1e-6, 120);
    return z.map((zeta) => {
      const j0 = besselJ(0, zeta);
      const j1 = besselJ(1, zeta);
      return { zeta, c: ((2 / zeta) * j1) / (j0 * j0 + j1 * j1) };
    });
  }
  // sphere: 1 − ζ cot ζ = Bi, C = 4 (sin ζ − ζ cos ζ)/(2ζ − sin 2ζ)
  const z = roots((x) => (1 - bi) * Math.sin(x) - x * Math.cos(x), count, 1e-3, 200);
  return z.map((zeta) => ({ zeta, c: (4 * (Math.sin(zeta) - zeta * Math.cos(zeta))) / (2 * zeta - Math.sin(2 * zeta)) }));
}

function seriesTheta(shape: SectionShape, modes: Array<{ zeta: number; c: number }>, rStar: number, fo: number): number {
  let s = 0;
  for (const { zeta, c } of modes) {
    const x = zeta * rStar;
    const shapeFn = shape === 'plate' ? Math.cos(x) : shape === 'cylinder' ? besselJ(0, x) : x === 0 ? 1 : Math.sin(x) / x;
    s += c * Math.exp(-zeta * zeta * fo) * shapeFn;
  }
  return s;
}

describe('series solutions used as the reference', () => {
  it('reproduce the first eigenvalues and coefficients of metallurgy.md §8.8 (= Incropera Table 5.1 to 4 figures)', () => {
    const table: Array<[number, number, number, number, number]> = [
      // Bi, cylinder ζ1, C1, slab ζ1, C1
      [0.1, 0.4417, 1.0246, 0.3111, 1.0161],
      [1.0, 1.2558, 1.2071, 0.8603, 1.1191],
      [10, 2.1795, 1.5677, 1.4289, 1.262],
    ];
    for (const [bi, zc, cc, zs, cs] of table) {
      const cyl = seriesModes('cylinder', bi, 1)[0];
      const slab = seriesModes('plate', bi, 1)[0];
      expect(cyl.zeta).toBeCloseTo(zc, 3);
      expect(cyl.c).toBeCloseTo(cc, 3);
      expect(slab.zeta).toBeCloseTo(zs, 3);
      expect(slab.c).toBeCloseTo(cs, 3);
    }
  });
});

describe('finite-volume conduction solver', () => {
  const props = constantProperties(30, 7850, 600); // α = 6.3694e−6 m²/s
  const bathStage = (durationS: number) => ({ durationS, ambientC: 300, heatTransferWPerM2K: () => 2000 });

  it('long bar: worked example A of metallurgy.md §8.8 within ±2 °C after 5 s', () => {
    // [C] exact series, 30 terms (metallurgy.md §8.8): R = 25 mm, k = 30, ρ = 7850, c_p = 600, h = 2000, 850 → 300 °C.
    const run = solveConduction({ shape: 'cylinder', halfSizeM: 0.025, props, initialC: 850, stages: [bathStage(300)], nodes: 41, dtS: 0.05 });
    const expected: Array<[number, number, number]> = [
      [5, 848.9, 661.0],
      [10, 829.4, 602.0],
      [30, 655.6, 481.0],
      [60, 477.7, 390.0],
      [120, 344.1, 322.3],
      [300, 300.7, 300.3],
    ];
    for (const [t, centre, surface] of expected) {
      const i = run.tS.findIndex((x) => Math.abs(x - t) < 1e-6);
      expect(i).toBeGreaterThan(0);
      expect(Math.abs(run.centreC[i] - centre)).toBeLessThanOrEqual(2);
      expect(Math.abs(run.surfaceC[i] - surface)).toBeLessThanOrEqual(2);
    }
  });

  it('plate: worked example B of metallurgy.md §8.8 within ±2 °C after 10 s', () => {
    // [C] exact series (metallurgy.md §8.8): half-thickness 20 mm, same properties and h.
    const run = solveConduction({ shape: 'plate', halfSizeM: 0.02, props, initialC: 850, stages: [bathStage(300)], nodes: 41, dtS: 0.05 });
    const expected: Array<[number, number, number]> = [
      [10, 830.1, 629.7],
      [30, 707.9, 537.3],
      [60, 565.0, 453.9],
      [120, 411.6, 364.8],
      [300, 308.3, 304.8],
    ];
    for (const [t, centre, surface] of expected) {
      const i = run.tS.findIndex((x) => Math.abs(x - t) < 1e-6);
      expect(Math.abs(run.centreC[i] - centre)).toBeLessThanOrEqual(2);
      expect(Math.abs(run.surfaceC[i] - surface)).toBeLessThanOrEqual(2);
    }
  });

  it('sphere: agrees with the exact series (Carslaw & Jaeger / Incropera eq. 5.50) within ±2 °C after 10 s', () => {
    const R = 0.03;
    const h = 2000;
    const bi = (h * R) / 30;
    const alpha = 30 / (7850 * 600);
    const modes = seriesModes('sphere', bi, 30);
    const run = solveConduction({ shape: 'sphere', halfSizeM: R, props, initialC: 850, stages: [bathStage(300)], nodes: 41, dtS: 0.05 });
    for (const t of [10, 30, 60, 120, 300]) {
      const i = run.tS.findIndex((x) => Math.abs(x - t) < 1e-6);
      const fo = (alpha * t) / (R * R);
      const centre = 300 + 550 * seriesTheta('sphere', modes, 0, fo);
      const surface = 300 + 550 * seriesTheta('sphere', modes, 1, fo);
      expect(Math.abs(run.centreC[i] - centre)).toBeLessThanOrEqual(2);
      expect(Math.abs(run.surfaceC[i] - surface)).toBeLessThanOrEqual(2);
    }
  });

  it('a growing time step (used for production quenches) stays within ±3 °C of the series for the long bar', () => {
    const run = solveConduction({ shape: 'cylinder', halfSizeM: 0.025, props, initialC: 850, stages: [bathStage(300)], nodes: 25, dtS: 0.02, dtMaxS: 0.5 });
    const modes = seriesModes('cylinder', (2000 * 0.025) / 30, 12); // Fo ≥ 0.1 here: modes beyond the 12th are below e^−90
    const alpha = 30 / (7850 * 600);
    let checked = 0;
    for (let i = 0; i < run.tS.length; i += 20) {
      if (run.tS[i] < 10) continue;
      checked++;
      const fo = (alpha * run.tS[i]) / (0.025 * 0.025);
      expect(Math.abs(run.centreC[i] - (300 + 550 * seriesTheta('cylinder', modes, 0, fo)))).toBeLessThanOrEqual(3);
    }
    expect(checked).toBeGreaterThan(10);
  });

  it('conserves energy: the heat convected out through the surface equals the enthalpy the part lost (T-dependent k)', () => {
    // Every step the surface loses h·(T_s − T_∞)·Δt per unit area (backward Euler uses the new surface temperature);
    // summed to (near) equilibrium it must equal ρ·c_p·(V/A)·(T_i − T_end), with V/A = R/(m + 1) for plate,
    // cylinder and sphere. A wrong control volume, face area or surface term breaks this; T-dependent conductivity
    // must not (interior fluxes cancel pairwise).
    const rho = 7850;
    const cp = 600;
    const varying = { conductivityWPerMK: (t: number) => 20 + 0.02 * t, specificHeatJPerKgK: () => cp, densityKgPerM3: rho };
    const h = 800;
    for (const shape of ['plate', 'cylinder', 'sphere'] as SectionShape[]) {
      const R = 0.015;
      const run = solveConduction({
        shape,
        halfSizeM: R,
        props: varying,
        initialC: 850,
        stages: [{ durationS: 4000, ambientC: 300, heatTransferWPerM2K: () => h }],
        dtS: 0.05,
        dtMaxS: 2,
      });
      let lostJPerM2 = 0;
      for (let i = 1; i < run.tS.length; i++) lostJPerM2 += h * (run.surfaceC[i] - 300) * (run.tS[i] - run.tS[i - 1]);
      const last = run.tS.length - 1;
      // The profile at the end is monotonic, so its mean lies between the surface and the centre.
      const endMeanLo = Math.min(run.surfaceC[last], run.centreC[last]);
      const endMeanHi = Math.max(run.surfaceC[last], run.centreC[last]);
      const volumePerArea = R / (shape === 'plate' ? 1 : shape === 'cylinder' ? 2 : 3);
      const drop = (mean: number) => rho * cp * volumePerArea * (850 - mean);
      expect(endMeanHi - 300).toBeLessThan(1); // close enough to equilibrium that the check is sharp
      expect(lostJPerM2).toBeLessThanOrEqual(drop(endMeanLo) * (1 + 1e-9));
      expect(lostJPerM2).toBeGreaterThanOrEqual(drop(endMeanHi) * (1 - 1e-9));
      expect(Math.abs(lostJPerM2 / drop(300) - 1)).toBeLessThan(2e-3);
    }
  });

  it('stops early when asked, and more agitation cools faster', () => {
    const core = (h: number) => {
      const run = solveConduction({
        shape: 'plate',
        halfSizeM: 0.01,
        props: STEEL_AUSTENITE_PROPERTIES,
        initialC: 880,
        stages: [{ durationS: 3600, ambientC: 300, heatTransferWPerM2K: () => h }],
        dtS: 0.05,
        dtMaxS: 0.5,
        stopWhen: (centre) => centre < 305,
      });
      return run.tS[run.tS.length - 1];
    };
    const still = core(bathHeatTransferWPerM2K('still'));
    const moderate = core(bathHeatTransferWPerM2K('moderate'));
    const strong = core(bathHeatTransferWPerM2K('strong'));
    expect(still).toBeGreaterThan(moderate);
    expect(moderate).toBeGreaterThan(strong);
    expect(strong).toBeLessThan(3600);
  });
});

describe('quench helpers', () => {
  it('salt-bath h = 2kH (metallurgy.md §7.2): H = 1/in with k = 28 gives ≈ 2200 W/(m² K)', () => {
    // §7.2: "With k ≈ 28 W/(m K) and H = 1 in⁻¹ = 39.37 m⁻¹ this gives h ≈ 2200". Our defaults are H × that.
    expect(bathHeatTransferWPerM2K('moderate') / 0.45).toBeCloseTo(2204.7, 0);
  });

  it('air transfer: radiation dominates when hot', () => {
    const h = airTransferHeatTransfer(20);
    expect(h(850)).toBeGreaterThan(80);
    expect(h(850)).toBeLessThan(200);
    expect(h(100)).toBeLessThan(h(850));
  });

  it('equivalent round: a plate cools like a 1.53× thicker round, a sphere like a 0.765× round (first eigenvalues at Bi → ∞)', () => {
    // [C] from the §7.3 series: ζ1 = π/2 (slab), 2.4048 (cylinder), π (sphere).
    expect(equivalentRoundDiameterMm('plate', 10)).toBeCloseTo(15.31, 2);
    expect(equivalentRoundDiameterMm('sphere', 10)).toBeCloseTo(7.65, 2);
    expect(equivalentRoundDiameterMm('cylinder', 10)).toBe(10);
  });
});
