/**
 * The metallurgical planted problems of the demo day (low-silicon heat, thick section, drift toward blocky
 * austenite) and what Ausline must make of them.
 *
 * Part 1 runs now: the scenario data really carry each problem (chemistry against the spec, section and
 * core cooling, carbon creeping heat by heat) and nothing else in the day does.
 * Part 2 is the catch, which depends on issue 4 (predictions, verdicts, drift charts). Its checks are
 * it.todo placeholders until issue 4 lands; then they run the demo day with runDemoDay() like
 * demo-day.test.ts and assert on the deviations the worker raises.
 * All plant data are invented (apps/line-sim/src/plant.ts).
 */
import { describe, expect, it } from 'vitest';
import { HEATS, heatByNumber, lineByCode, productByCode, specInForce } from '../apps/line-sim/src/plant.js';
import { DEMO_DAY, ROUTINE } from '../apps/line-sim/src/scenario.js';
import { buildSchedule } from '../apps/line-sim/src/schedule.js';

const schedule = buildSchedule(DEMO_DAY, ROUTINE, { startMs: Date.UTC(2025, 2, 4, 6), routine: false });
const loads = schedule.lines.flatMap((l) => l.loads);
const planted = (problem: string) => loads.filter((l) => l.plan.planted === problem);

// ---------------------------------------------------------------------------------------------
// Transient conduction in a long cylinder, exact series (Carslaw & Jaeger; metallurgy.md §7.3):
//   θ*(0, t) = Σ C_n exp(−ζ_n² Fo),  ζ_n J1(ζ_n) = Bi J0(ζ_n),  C_n = (2/ζ_n) J1(ζ_n) / (J0²(ζ_n) + J1²(ζ_n))
// ---------------------------------------------------------------------------------------------

/** Bessel's integral J_n(x) = (1/π) ∫_0^π cos(nτ − x sin τ) dτ, Simpson's rule. */
function besselJ(n: number, x: number): number {
  const steps = 2000;
  const h = Math.PI / steps;
  let sum = 0;
  for (let i = 0; i <= steps; i++) {
    const tau = i * h;
    const w = i === 0 || i === steps ? 1 : i % 2 === 1 ? 4 : 2;
    sum += w * Math.cos(n * tau - x * Math.sin(tau));
  }
  return (sum * h) / 3 / Math.PI;
}

const eigenCache = new Map<string, Array<{ zeta: number; c: number }>>();

function cylinderEigen(bi: number, terms: number): Array<{ zeta: number; c: number }> {
  const cacheKey = `${bi}:${terms}`;
  const cached = eigenCache.get(cacheKey);
  if (cached) return cached;
  const f = (z: number) => z * besselJ(1, z) - bi * besselJ(0, z);
  const out: Array<{ zeta: number; c: number }> = [];
  let a = 1e-6;
  let fa = f(a);
  for (let b = 0.02; out.length < terms; b += 0.02) {
    const fb = f(b);
    if (fa * fb <= 0) {
      let lo = a;
      let hi = b;
      for (let k = 0; k < 60; k++) {
        const mid = (lo + hi) / 2;
        if (f(lo) * f(mid) <= 0) hi = mid;
        else lo = mid;
      }
      const z = (lo + hi) / 2;
      const j0 = besselJ(0, z);
      const j1 = besselJ(1, z);
      out.push({ zeta: z, c: ((2 / z) * j1) / (j0 * j0 + j1 * j1) });
    }
    a = b;
    fa = fb;
  }
  eigenCache.set(cacheKey, out);
  return out;
}

interface Bar {
  radiusM: number;
  kWPerMK: number;
  rhoKgPerM3: number;
  cpJPerKgK: number;
  hWPerM2K: number;
}

function centreTempC(bar: Bar, initialC: number, fluidC: number, tS: number): number {
  const bi = (bar.hWPerM2K * bar.radiusM) / bar.kWPerMK;
  const alpha = bar.kWPerMK / (bar.rhoKgPerM3 * bar.cpJPerKgK);
  const fo = (alpha * tS) / (bar.radiusM * bar.radiusM);
  const theta = cylinderEigen(bi, 12).reduce((s, e) => s + e.c * Math.exp(-e.zeta * e.zeta * fo), 0);
  return fluidC + theta * (initialC - fluidC);
}

/** Seconds until the centre of the bar falls to targetC (bisection on the series). */
function centreTimeToS(bar: Bar, initialC: number, fluidC: number, targetC: number): number {
  let lo = 0.5;
  let hi = 3600;
  for (let k = 0; k < 50; k++) {
    const mid = (lo + hi) / 2;
    if (centreTempC(bar, initialC, fluidC, mid) > targetC) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}

describe('the planted metallurgical problems are in the data (runs now)', () => {
  it('conduction series reproduces the long-bar worked example', () => {
    // metallurgy.md §8.8 worked example A [C, exact series]: R 25 mm, k 30, ρ 7850, c_p 600, h 2000, 850 → 300 °C.
    const bar: Bar = { radiusM: 0.025, kWPerMK: 30, rhoKgPerM3: 7850, cpJPerKgK: 600, hWPerM2K: 2000 };
    expect(centreTempC(bar, 850, 300, 30)).toBeCloseTo(655.6, 0);
    expect(centreTempC(bar, 850, 300, 60)).toBeCloseTo(477.7, 0);
    expect(centreTempC(bar, 850, 300, 120)).toBeCloseTo(344.1, 0);
    // First eigenvalue at Bi = 1: ζ1 1.2558, C1 1.2071 (metallurgy.md §8.8, matching Incropera Table 5.1).
    const [first] = cylinderEigen(1, 1);
    expect(first!.zeta).toBeCloseTo(1.2558, 3);
    expect(first!.c).toBeCloseTo(1.2071, 3);
  });

  it('low silicon: only heat NM-51617 is below the Si + Al that keeps cementite out, and only one batch uses it', () => {
    const [lowSi] = planted('low-silicon');
    expect(lowSi).toBeDefined();
    const spec = specInForce(productByCode(lowSi!.plan.product));
    const siPlusAl = (heatNumber: string) => {
      const c = heatByNumber(heatNumber).chemistryWtPct;
      return (c.Si ?? 0) + (c.Al ?? 0);
    };
    // Si (+Al) ≈ 1.5 wt% or more suppresses cementite in carbide-free bainite (metallurgy.md §5.3 [M]).
    expect(siPlusAl(lowSi!.plan.heat)).toBeLessThan(spec.acceptanceCriteria.minSiPlusAlWtPct!);
    expect(heatByNumber(lowSi!.plan.heat).chemistryWtPct.Si!).toBeLessThan(spec.chemistryLimits.Si!.minWtPct!);
    for (const load of loads.filter((l) => l !== lowSi && productByCode(l.plan.product).material === 'STEEL')) {
      const criteria = specInForce(productByCode(load.plan.product)).acceptanceCriteria;
      expect({ batch: load.plan.heat, ok: siPlusAl(load.plan.heat) >= criteria.minSiPlusAlWtPct! }).toEqual({ batch: load.plan.heat, ok: true });
    }
  });

  it('thick section: the Ø40 pin core cools far slower than any other steel part of the day', () => {
    const [pin] = planted('thick-section');
    expect(pin!.sectionSizeMm).toBe(40);
    const line = lineByCode(pin!.line);
    // Hot steel k ≈ 28 W/(m·K) (metallurgy.md §7.2 [M]); ρ·c as the simulator's physics [M]; h of the line's normal agitation.
    const barOf = (diameterMm: number): Bar => ({ radiusM: diameterMm / 2000, kWPerMK: 28, rhoKgPerM3: 7800, cpJPerKgK: 650, hWPerM2K: line.hCoefficientByAgitation.normal! });
    const startC = line.furnace.setpointC - 10;
    const saltC = line.bath.setpointC;
    // Time for the centre to fall below 500 °C, under the pearlite/upper-bainite range of such steels [M].
    const coreS = (mm: number) => centreTimeToS(barOf(mm), startC, saltC, 500);
    const pinS = coreS(40);
    // Other steel parts are wires and strip (3.2 and 2.5 mm) and M24 bolts; taken as bars of that size (a
    // strip cools faster than a bar of its thickness, so this only flatters them).
    const otherSizes = new Set(loads.filter((l) => l !== pin && productByCode(l.plan.product).material === 'STEEL').map((l) => l.sectionSizeMm));
    const slowestOther = Math.max(...[...otherSizes].map(coreS));
    console.log(`core below 500 °C: Ø40 pin ${pinS.toFixed(0)} s; slowest other steel part ${slowestOther.toFixed(0)} s (M24 bolt) [C]`);
    expect(pinS).toBeGreaterThan(1.8 * slowestOther);
    // The same heat (CB-7716) also makes M24 bolts that day: the section, not the steel, is the difference.
    expect(loads.some((l) => l.plan.heat === pin!.plan.heat && l.sectionSizeMm === 24)).toBe(true);
  });

  it('blocky drift: carbon creeps up heat by heat through the run, each heat inside the spec, after a steady baseline', () => {
    const washers = loads.filter((l) => l.plan.product === 'HV-WAVE-25');
    const run = washers.filter((l) => l.plan.planted === 'blocky-drift');
    const baseline = washers.filter((l) => l.seq < run[0]!.seq);
    expect(run.length).toBeGreaterThanOrEqual(6);
    expect(baseline.length).toBeGreaterThanOrEqual(4);
    // Consecutive lots of one product on one line: what the drift charts of issue 4 plot.
    expect(washers.slice(-run.length)).toEqual(run);
    const carbon = (heat: string) => heatByNumber(heat).chemistryWtPct.C!;
    expect(new Set(baseline.map((l) => carbon(l.plan.heat))).size).toBe(1);
    const runCarbon = run.map((l) => carbon(l.plan.heat));
    for (let i = 1; i < runCarbon.length; i++) expect(runCarbon[i]!).toBeGreaterThan(runCarbon[i - 1]!);
    const limits = specInForce(productByCode('HV-WAVE-25')).chemistryLimits.C!;
    for (const c of [...runCarbon, carbon(HEATS.washerStock.heatNumber)]) {
      expect(c).toBeGreaterThanOrEqual(limits.minWtPct!);
      expect(c).toBeLessThanOrEqual(limits.maxWtPct!);
    }
    // The lab's XRD retained austenite rises with it.
    const ra = run.map((l) => l.plan.lab.retainedAusteniteVolPct!);
    for (let i = 1; i < ra.length; i++) expect(ra[i]!).toBeGreaterThan(ra[i - 1]!);
  });
});

describe('Ausline catches the metallurgical planted problems (depends on issue 4: predictions, verdicts, drift)', () => {
  it.todo('issue 4: the low-silicon batch (heat NM-51617, 0.41 Si) raises the Si + Al criterion (minSiPlusAlWtPct), and no other batch does');
  it.todo('issue 4: heat advice / acceptance at receipt flags NM-51617 against the HV-CLIP-32 chemistry limits (Si 1.50–2.00)');
  it.todo('issue 4: the Ø40 pin batch raises "upper transformation products during the quench" for its section; the M24 bolts of the same heat do not');
  it.todo('issue 4: the short-hold ADI bracket raises incomplete transformation (stage I unfinished, fresh martensite) besides hold-min');
  it.todo('issue 4: the blocky-drift run of HV-WAVE-25 on HV-L1 raises a drift deviation before any lot of the run breaks maxBlockyAusteniteFraction or minFilmToBlockRatio');
  it.todo('issue 4: the bath-creep lots of HV-TRACK-M24 on HV-L2 show on the bath-temperature-during-hold chart');
  it.todo('issue 4: no conforming batch of the demo day raises a metallurgical deviation (tune the provisional acceptance values in apps/line-sim/src/plant.ts against the models if needed)');
  it.todo('issue 4: lab results (hardness, XRD retained austenite) of the conforming batches fall inside their predicted bands (no model–process mismatch)');
});
