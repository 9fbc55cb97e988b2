/**
 * Hardness and tensile strength of the final microstructure (metallurgy.md §6).
 *
 * No published relation predicts the hardness of carbide-free bainite + retained austenite directly (Maynier's HV_B
 * is for conventional, carbide-bearing bainite, §6.1 and §9.7). We therefore build it up and say so:
 *   bainitic ferrite: the component strength model of §6.3 (Young & Bhadeshia 1994 form; coefficients [M])
 *       σ_y = 219 + 83·Si + 32·Mn + 1722.5·√(C in ferrite) + 115/(2 t) + 7.34e−6·√ρ(T)      (MPa; t in µm, ρ in m⁻²)
 *       converted to hardness with Tabor's relation H ≈ 3σ (HV = 3σ/9.807) [M]
 *   retained austenite: an assumed 300 HV (our assumption, no source)
 *   fresh martensite: as-quenched martensite hardness vs carbon, ASTM A255 HRC_M polynomial (§6.2, [F2]), carbon
 *       clamped to its 0.1–0.7 range, converted by the E140 rows (extended linearly above HRC 60)
 *   upper products (ferrite + pearlite): Maynier, Dollet & Bastien 1978 HV_F+P (§6.1, [F1] as printed in Li 1998)
 *   mixture: linear in volume fraction (Li 1998 eq. 26 form; §6.3 notes it is a first estimate)
 *   ductile iron: the matrix value times (1 − graphite volume fraction) (graphite taken as having no hardness)
 * Tensile: steel Rm ≈ 3.25·HV (order of the ISO 18265 tables, ±10 %, [M]); ADI from the A897 grade table
 * (hardness.ts adiTensileFromHbw), not from steel conversions (§6.4).
 * Every output of this module carries a widened model error in the ensemble and a warning in the prediction.
 */
import type { ChemistryWtPct } from './chemistry.js';
import { E140_ROWS } from './hardness.js';

export const ASSUMED_RETAINED_AUSTENITE_HV = 300;
export const STEEL_TENSILE_PER_HV = 3.25;
/** Tabor: indentation hardness ≈ 3 × flow stress; HV (kgf/mm²) = 3σ(MPa)/9.807. */
export const TABOR_HV_PER_MPA = 3 / 9.807;

/**
 * Bainite plate thickness vs formation temperature, µm (Singh & Bhadeshia 1998; equation not recovered, points
 * [M]: ≈0.2 µm at 400 °C, 0.1 at 300 °C, 0.03 at 200 °C). Log-linear between the points, clamped 0.02–0.5 µm.
 */
export function bainitePlateThicknessUm(tempC: number): number {
  const pts: Array<[number, number]> = [
    [200, 0.03],
    [300, 0.1],
    [400, 0.2],
  ];
  let lnT: number;
  if (tempC <= 300) lnT = Math.log(pts[0][1]) + ((tempC - 200) / 100) * (Math.log(pts[1][1]) - Math.log(pts[0][1]));
  else lnT = Math.log(pts[1][1]) + ((tempC - 300) / 100) * (Math.log(pts[2][1]) - Math.log(pts[1][1]));
  return Math.min(0.5, Math.max(0.02, Math.exp(lnT)));
}

/** Dislocation density of bainitic ferrite, m⁻² (Takahashi & Bhadeshia 1990, §6.3 [M]); T clamped to 570–920 K. */
export function bainiteDislocationDensity(tempC: number): number {
  const t = Math.min(920, Math.max(570, tempC + 273.15));
  return Math.pow(10, 9.284 + 6880.73 / t - 1780360 / (t * t));
}

/** Yield strength of bainitic ferrite formed at tempC, MPa (§6.3 component model). */
export function bainiticFerriteYieldMPa(chem: ChemistryWtPct, formationTempC: number, carbonInFerriteWtPct: number): number {
  const si = chem.Si ?? 0;
  const mn = chem.Mn ?? 0;
  const plate = bainitePlateThicknessUm(formationTempC);
  return (
    219 +
    83 * si +
    32 * mn +
    1722.5 * Math.sqrt(Math.max(0, carbonInFerriteWtPct)) +
    115 / (2 * plate) +
    7.34e-6 * Math.sqrt(bainiteDislocationDensity(formationTempC))
  );
}

/** As-quenched martensite hardness, HRC (ASTM A255 via §6.2 [F2]); carbon clamped to 0.1–0.7 wt%. */
export function martensiteHrcA255(carbonWtPct: number): number {
  const c = Math.min(0.7, Math.max(0.1, carbonWtPct));
  return 33.087 + c * (50.723 + c * (33.662 + c * (-2.7048 + c * (-107.02 + c * 43.523))));
}

/** HV from HRC on the E140 rows, extended linearly beyond the first/last row (only used for phase hardness). */
export function hvFromHrcExtended(hardnessHRC: number): number {
  const rows = E140_ROWS;
  let i = 1;
  while (i < rows.length - 1 && hardnessHRC > rows[i].hrc) i++;
  const a = rows[i - 1];
  const b = rows[i];
  return a.hv + ((hardnessHRC - a.hrc) / (b.hrc - a.hrc)) * (b.hv - a.hv);
}

/** Maynier, Dollet & Bastien 1978 HV of ferrite + pearlite; Vr = cooling rate at 700 °C in °C/h. */
export function maynierFerritePearliteHV(chem: ChemistryWtPct, coolingRateCPerH: number): number {
  const w = (el: keyof ChemistryWtPct) => chem[el] ?? 0;
  const logVr = Math.log10(Math.max(1, coolingRateCPerH));
  return (
    42 +
    223 * w('C') +
    53 * w('Si') +
    30 * w('Mn') +
    12.6 * w('Ni') +
    7 * w('Cr') +
    19 * w('Mo') +
    (10 - 19 * w('Si') + 4 * w('Ni') + 8 * w('Cr') + 130 * w('V')) * logVr
  );
}

/** Graphite volume fraction of a ductile iron from the carbon not dissolved in the matrix (ρ_gr 2.2, ρ_matrix 7.6 g/cm³ [M]). */
export function graphiteVolumeFraction(bulkCarbonWtPct: number, matrixCarbonWtPct: number): number {
  const m = Math.max(0, bulkCarbonWtPct - matrixCarbonWtPct) / 100;
  const vg = m / 2.2;
  return vg / (vg + (1 - m) / 7.6);
}

export interface PhaseFractions {
  bainiticFerrite: number;
  austenite: number;
  freshMartensite: number;
  bathMartensite: number;
  upperProducts: number;
}

export interface PhaseHardness {
  bainiticFerriteHV: number;
  austeniteHV: number;
  martensiteHV: number;
  upperProductsHV: number;
}

export function mixtureHardnessHV(f: PhaseFractions, h: PhaseHardness): number {
  return (
    f.bainiticFerrite * h.bainiticFerriteHV +
    f.austenite * h.austeniteHV +
    (f.freshMartensite + f.bathMartensite) * h.martensiteHV +
    f.upperProducts * h.upperProductsHV
  );
}
