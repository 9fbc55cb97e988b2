/**
 * The quench leg: from the austenitizing furnace through the transfer in air into the bath, for the centre and the
 * surface of the section (1-D conduction, conduction.ts), and what may form on the way before the centre reaches
 * the bath: ferrite and pearlite by the Li 1998 rates summed along the centre path (Scheil additivity, exact for
 * Li's separable τ, metallurgy.md §3.1/§3.3; §9.10: additivity is applied only to these diffusional products).
 *
 * Bainite formed while the centre is still above the bath is NOT counted here: the bath kinetics run on the
 * centre temperature (bath log + the centre's excess over the bath from this simulation), so it is part of the
 * bainite fraction.
 */
import { liExtentFromSum, liRateAt, liS, type LiRate } from '../kinetics/li1998.js';
import {
  airTransferHeatTransfer,
  solveConduction,
  type ConductionProperties,
  type ConductionRun,
  type SectionShape,
} from './conduction.js';

/** The centre "has reached the bath" when it is within this many °C of the bath temperature. */
export const CORE_AT_BATH_MARGIN_C = 5;
/** Longest quench simulated, s after bath entry. */
const MAX_QUENCH_S = 4 * 3600;

export interface QuenchInput {
  shape: SectionShape;
  halfSizeM: number;
  props: ConductionProperties;
  austenitizeC: number;
  transferS: number;
  ambientC: number;
  bathC: number;
  heatTransferWPerM2K: number;
}

export interface QuenchHistory {
  /** s after bath entry (negative during the transfer). */
  tS: number[];
  centreC: number[];
  surfaceC: number[];
  /** s after bath entry when the centre is within CORE_AT_BATH_MARGIN_C of the bath; null if not within MAX_QUENCH_S. */
  coreReachesBathS: number | null;
}

export function simulateQuench(q: QuenchInput): QuenchHistory {
  const run: ConductionRun = solveConduction({
    shape: q.shape,
    halfSizeM: q.halfSizeM,
    props: q.props,
    initialC: q.austenitizeC,
    nodes: 25,
    dtS: 0.02,
    dtMaxS: Math.max(0.05, Math.min(1, (q.halfSizeM * 1000) / 50)),
    stages: [
      { durationS: q.transferS, ambientC: q.ambientC, heatTransferWPerM2K: airTransferHeatTransfer(q.ambientC) },
      { durationS: MAX_QUENCH_S, ambientC: q.bathC, heatTransferWPerM2K: () => q.heatTransferWPerM2K },
    ],
    // Run on until the centre is within 0.5 °C, so the excess-temperature table used by the bath kinetics decays smoothly.
    stopWhen: (centre) => centre - q.bathC < 0.5,
  });
  const tS = run.tS.map((t) => t - q.transferS);
  let coreReachesBathS: number | null = null;
  for (let i = 1; i < tS.length; i++) {
    if (tS[i] >= 0 && run.centreC[i] - q.bathC <= CORE_AT_BATH_MARGIN_C) {
      const a = run.centreC[i - 1] - q.bathC - CORE_AT_BATH_MARGIN_C;
      const b = run.centreC[i] - q.bathC - CORE_AT_BATH_MARGIN_C;
      coreReachesBathS = Math.max(0, tS[i - 1] + (a > 0 && a !== b ? (a / (a - b)) * (tS[i] - tS[i - 1]) : 0));
      break;
    }
  }
  return { tS, centreC: run.centreC, surfaceC: run.surfaceC, coreReachesBathS };
}

/** Σ Δt/τ̂ (trapezoid) along the centre path from furnace exit until the centre reaches the bath. */
export function additiveSumAlongCentre(history: QuenchHistory, rate: LiRate): number {
  const end = history.coreReachesBathS ?? Infinity;
  let sum = 0;
  let prevT = history.tS[0];
  let prevR = liRateAt(rate, history.centreC[0]);
  for (let i = 1; i < history.tS.length; i++) {
    const t = history.tS[i];
    if (prevT >= end) break;
    const r = liRateAt(rate, history.centreC[i]);
    const dt = Math.min(t, end) - prevT;
    sum += 0.5 * (prevR + r) * dt;
    prevT = t;
    prevR = r;
  }
  return sum;
}

/** Cooling rate of the centre at 700 °C, °C/s (for Maynier's relations); null if the path never crosses 700 °C. */
export function centreCoolingRateAt(history: QuenchHistory, tempC = 700): number | null {
  for (let i = 1; i < history.tS.length; i++) {
    if (history.centreC[i - 1] > tempC && history.centreC[i] <= tempC) {
      const dt = history.tS[i] - history.tS[i - 1];
      return dt > 0 ? (history.centreC[i - 1] - history.centreC[i]) / dt : null;
    }
  }
  return null;
}

/**
 * The centre's excess over the bath temperature on a regular grid from bath entry, for the bath kinetics:
 * part temperature = logged bath temperature + excess(t). Zero after the end of the table.
 */
export function centreExcessTable(history: QuenchHistory, bathC: number, maxPoints = 900): { stepS: number; excessC: number[] } {
  const endS = Math.max(0, history.tS[history.tS.length - 1]);
  const stepS = Math.max(1, Math.ceil(endS / maxPoints));
  const excessC: number[] = [];
  let j = 0;
  for (let t = 0; t <= endS + 1e-9; t += stepS) {
    while (j < history.tS.length - 2 && history.tS[j + 1] < t) j++;
    const t0 = history.tS[j];
    const t1 = history.tS[j + 1] ?? t0;
    const c0 = history.centreC[j];
    const c1 = history.centreC[j + 1] ?? c0;
    const c = t1 > t0 ? c0 + ((t - t0) / (t1 - t0)) * (c1 - c0) : c0;
    excessC.push(Math.max(0, c - bathC));
  }
  excessC.push(0);
  return { stepS, excessC };
}

/** Ferrite/pearlite/… extent X = S⁻¹(sum) of an additive sum, and the Scheil onset index Σ Δt/τ(X = 1 %). */
export function extentFromAdditiveSum(sum: number): { extent: number; onsetIndex: number } {
  return { extent: liExtentFromSum(sum), onsetIndex: sum / liS(0.01) };
}

/**
 * Equilibrium ferrite fraction used to scale Li's normalised ferrite extent: lever rule between 0.02 wt% (ferrite)
 * and the eutectoid 0.77 wt% C of the Fe–C diagram (§8.1), ignoring the alloy shift of the eutectoid [M].
 */
export function equilibriumFerriteFraction(carbonWtPct: number): number {
  return Math.min(1, Math.max(0, (0.77 - carbonWtPct) / (0.77 - 0.02)));
}

/** Upper products (ferrite + pearlite) from the two normalised extents. */
export function upperProductsFraction(ferriteExtent: number, pearliteExtent: number, ferriteEq: number): number {
  return Math.min(1, ferriteEq * ferriteExtent + (1 - ferriteEq) * pearliteExtent);
}
