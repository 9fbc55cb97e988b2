/**
 * The quench leg of one batch, computed once when the first bath sample arrives (the bath temperature it
 * starts from is the first logged sample), stored in the batch state, and spread over the ensemble:
 * three conduction runs at ln h = ln h0 + zσ for z = −1, 0, +1 (the bath heat-transfer uncertainty), the
 * ferrite and pearlite additive sums on each centre path, and their sensitivity to Ae3/Ae1. A member's sums are
 * then interpolated in z (quadratic in ln sum) and scaled by its composition and model-error factors – exact for
 * the composition factor (Li's FC/PC are multiplicative), first order for Ae3/Ae1.
 */
import { liExtentFromSum, liRate, liS } from '../kinetics/li1998.js';
import type { BatchModel } from '../ensemble.js';
import { MODEL_ERRORS } from '../ensemble.js';
import { sectionHalfSizeM } from '../setup.js';
import { ae1C, ae3C } from '../temperatures.js';
import { bathHeatTransferWPerM2K, DUCTILE_IRON_AUSTENITE_PROPERTIES, STEEL_AUSTENITE_PROPERTIES } from './conduction.js';
import {
  additiveSumAlongCentre,
  centreCoolingRateAt,
  centreExcessTable,
  simulateQuench,
  upperProductsFraction,
  type QuenchHistory,
} from './quench.js';

export interface QuenchSummary {
  bathStartC: number;
  heatTransferWPerM2K: number;
  /** By z = −1, 0, +1 of the heat-transfer coefficient. */
  coreReachesBathSByZ: Array<number | null>;
  ferriteSumByZ: number[];
  pearliteSumByZ: number[];
  /** ∂ ln(sum)/∂Ae3 and ∂ ln(sum)/∂Ae1, 1/K, on the nominal path. */
  ferriteLnSumPerAe3K: number;
  pearliteLnSumPerAe1K: number;
  /** Centre cooling rate at 700 °C on the nominal path, °C/s. */
  coolingRateAt700CPerS: number | null;
  /** Centre excess over the bath on a regular grid from bath entry (nominal path). */
  excess: { stepS: number; excessC: number[] };
}

export function heatTransferFor(model: BatchModel): number {
  return model.setup.heatTransferWPerM2K ?? bathHeatTransferWPerM2K(model.setup.agitation);
}

export function quenchHistory(model: BatchModel, bathStartC: number, heatTransferWPerM2K = heatTransferFor(model)): QuenchHistory {
  const s = model.setup;
  return simulateQuench({
    shape: s.section.shape,
    halfSizeM: sectionHalfSizeM(s.section),
    props: s.material === 'ductile-iron' ? DUCTILE_IRON_AUSTENITE_PROPERTIES : STEEL_AUSTENITE_PROPERTIES,
    austenitizeC: s.austenitize.tempC,
    transferS: s.transferS,
    ambientC: s.ambientC,
    bathC: bathStartC,
    heatTransferWPerM2K,
  });
}

export function computeQuenchSummary(model: BatchModel, bathStartC: number): QuenchSummary {
  const h0 = heatTransferFor(model);
  const chem = model.chem;
  const g = model.setup.grainSizeAstm;
  const ae1 = ae1C(chem);
  const ae3 = Math.max(ae1, ae3C(chem));
  const ferrite = liRate('ferrite', chem, g, ae3);
  const pearlite = liRate('pearlite', chem, g, ae1);
  const runs = [-1, 0, 1].map((z) => quenchHistory(model, bathStartC, h0 * Math.exp(z * MODEL_ERRORS.heatTransferLnSd)));
  const nominal = runs[1];
  const fNom = additiveSumAlongCentre(nominal, ferrite);
  const pNom = additiveSumAlongCentre(nominal, pearlite);
  const fUp = additiveSumAlongCentre(nominal, liRate('ferrite', chem, g, ae3 + 10));
  const pUp = additiveSumAlongCentre(nominal, liRate('pearlite', chem, g, ae1 + 10));
  return {
    bathStartC,
    heatTransferWPerM2K: h0,
    coreReachesBathSByZ: runs.map((r) => r.coreReachesBathS),
    ferriteSumByZ: runs.map((r) => additiveSumAlongCentre(r, ferrite)),
    pearliteSumByZ: runs.map((r) => additiveSumAlongCentre(r, pearlite)),
    ferriteLnSumPerAe3K: fNom > 0 && fUp > 0 ? (Math.log(fUp) - Math.log(fNom)) / 10 : 0,
    pearliteLnSumPerAe1K: pNom > 0 && pUp > 0 ? (Math.log(pUp) - Math.log(pNom)) / 10 : 0,
    coolingRateAt700CPerS: centreCoolingRateAt(nominal, 700),
    excess: centreExcessTable(nominal, bathStartC),
  };
}

/** Quadratic Lagrange interpolation through (−1, a), (0, b), (1, c); z clamped to ±2. */
function interpolateZ(values: number[], z: number): number {
  const zz = Math.max(-2, Math.min(2, z));
  const [a, b, c] = values;
  return b + (zz * (c - a)) / 2 + (zz * zz * (c - 2 * b + a)) / 2;
}

const LN_FLOOR = Math.log(1e-300);
const safeLn = (x: number) => (x > 0 ? Math.log(x) : LN_FLOOR);

export interface MemberQuench {
  upperProducts: Float64Array;
  coreReachesBathS: Float64Array; // NaN = not reached within the simulated time
  ferriteOnsetIndex: Float64Array;
  pearliteOnsetIndex: Float64Array;
}

/** Per-member quench results (memoised on the model for this summary). */
export function memberQuench(model: BatchModel, q: QuenchSummary): MemberQuench {
  const key = `quench:${q.bathStartC}:${q.heatTransferWPerM2K}`;
  const hit = model.cache.get(key) as MemberQuench | undefined;
  if (hit) return hit;
  const m = model.members;
  const n = model.size;
  const out: MemberQuench = {
    upperProducts: new Float64Array(n),
    coreReachesBathS: new Float64Array(n),
    ferriteOnsetIndex: new Float64Array(n),
    pearliteOnsetIndex: new Float64Array(n),
  };
  const lnF = q.ferriteSumByZ.map(safeLn);
  const lnP = q.pearliteSumByZ.map(safeLn);
  const core = q.coreReachesBathSByZ;
  const coreKnown = core.every((c) => c !== null);
  const lnCore = coreKnown ? (core as number[]).map((c) => Math.log(Math.max(c, 0.1))) : null;
  const s01 = liS(0.01);
  // The nominal member carries the calibration factor but no model error; the stored sums are for Li as published.
  for (let k = 0; k < n; k++) {
    const z = m.heatTransferZ[k];
    const f = Math.exp(interpolateZ(lnF, z) + m.ferriteLnFactor[k] + q.ferriteLnSumPerAe3K * m.ae3ShiftC[k]);
    const p = Math.exp(interpolateZ(lnP, z) + m.pearliteLnFactor[k] + q.pearliteLnSumPerAe1K * m.ae1ShiftC[k]);
    out.upperProducts[k] = upperProductsFraction(liExtentFromSum(f), liExtentFromSum(p), m.ferriteEq[k]);
    out.ferriteOnsetIndex[k] = f / s01;
    out.pearliteOnsetIndex[k] = p / s01;
    out.coreReachesBathS[k] = lnCore ? Math.exp(interpolateZ(lnCore, z)) : Number.NaN;
  }
  // The nominal member is the nominal run itself, not an interpolation.
  out.coreReachesBathS[0] = core[1] ?? Number.NaN;
  model.cache.set(key, out);
  return out;
}
