/**
 * Li, Niebuhr, Meekisho & Atteridge 1998 (Metall. Mater. Trans. B 29B, 661–672) transformation kinetics
 * (metallurgy.md §3.1, [F1]: full text read by the author of metallurgy.md).
 *
 * Isothermal time to reach fraction X of each product's equilibrium amount is separable:
 *   τ(X, T) = τ̂(T) · S(X),     S(X) = ∫_0^X dx / [x^{0.4(1−x)} (1−x)^{0.4x}]
 *   τ̂_F = FC / [2^{0.41G} (Ae3 − T)^3 exp(−Q/RT)],  τ̂_P = PC / [2^{0.32G} (Ae1 − T)^3 exp(−Q/RT)],
 *   τ̂_B = BC / [2^{0.29G} (Bs − T)^2 exp(−Q/RT)],   Q = 27 500 cal/mol (the paper prints "kcal"; §9.6), R = 1.9872 cal/(mol K).
 * Because τ is separable, additivity (Li eq. 15) is exact along any path: S(X(t)) = ∫ dt / τ̂(T(t)), so
 * X = S⁻¹(Σ Δt/τ̂). Integrating Li's dX/dt form directly would stall at X = 0 (§3.1).
 *
 * Validity: calibrated on CCT diagrams of low-alloy steels (A36 … 4340). Not calibrated for 1.5–2.5 Si
 * carbide-free steels nor for cast iron; callers say so and widen the band.
 */
import type { ChemistryWtPct } from '../chemistry.js';

/** Activation energy over the gas constant, K: 27 500 cal/mol / 1.9872 cal/(mol K). */
export const LI_Q_OVER_R_K = 27500 / 1.9872;
export const KELVIN = 273.15;

const w = (chem: ChemistryWtPct, el: keyof ChemistryWtPct): number => chem[el] ?? 0;

/** Li 1998 composition factors (§3.1), wt%. */
export function liFerriteFactor(chem: ChemistryWtPct): number {
  return Math.exp(1.0 + 6.31 * w(chem, 'C') + 1.78 * w(chem, 'Mn') + 0.31 * w(chem, 'Si') + 1.12 * w(chem, 'Ni') + 2.7 * w(chem, 'Cr') + 4.06 * w(chem, 'Mo'));
}
export function liPearliteFactor(chem: ChemistryWtPct): number {
  return Math.exp(-4.25 + 4.12 * w(chem, 'C') + 4.36 * w(chem, 'Mn') + 0.44 * w(chem, 'Si') + 1.71 * w(chem, 'Ni') + 3.33 * w(chem, 'Cr') + 5.19 * Math.sqrt(w(chem, 'Mo')));
}
export function liBainiteFactor(chem: ChemistryWtPct): number {
  return Math.exp(-10.23 + 10.18 * w(chem, 'C') + 0.85 * w(chem, 'Mn') + 0.55 * w(chem, 'Ni') + 0.9 * w(chem, 'Cr') + 0.36 * w(chem, 'Mo'));
}

/** Li 1998 eq. 24 bainite start (Kirkaldy–Venugopalan with Si fixed at 0.25), °C [F1]. The start the Li rates were fitted with. */
export function liBainiteStartC(chem: ChemistryWtPct): number {
  return 637 - 58 * w(chem, 'C') - 35 * w(chem, 'Mn') - 15 * w(chem, 'Ni') - 34 * w(chem, 'Cr') - 41 * w(chem, 'Mo');
}

export type LiProduct = 'ferrite' | 'pearlite' | 'bainite';

/** Exponent of the undercooling and grain-size coefficient per product (Li eqs. 5–7). */
const UNDERCOOLING_EXPONENT: Record<LiProduct, number> = { ferrite: 3, pearlite: 3, bainite: 2 };
const GRAIN_COEFF: Record<LiProduct, number> = { ferrite: 0.41, pearlite: 0.32, bainite: 0.29 };

/**
 * Rate constants of one product for one composition: 1/τ̂(T) = prefactor · (startC − T)^n · exp(−Q/(R·T_K)).
 * `timeFactor` multiplies τ̂ (model error or a per-product calibration; 1 = Li as published).
 */
export interface LiRate {
  product: LiProduct;
  /** Ae3 (ferrite), Ae1 (pearlite) or Bs (bainite), °C: no reaction at or above it. */
  startC: number;
  exponent: number;
  /** 2^{N·G} / (composition factor · timeFactor), 1/s per K^n. */
  prefactor: number;
}

export function liRate(product: LiProduct, chem: ChemistryWtPct, grainSizeAstm: number, startC: number, timeFactor = 1): LiRate {
  const factor = product === 'ferrite' ? liFerriteFactor(chem) : product === 'pearlite' ? liPearliteFactor(chem) : liBainiteFactor(chem);
  return {
    product,
    startC,
    exponent: UNDERCOOLING_EXPONENT[product],
    prefactor: Math.pow(2, GRAIN_COEFF[product] * grainSizeAstm) / (factor * timeFactor),
  };
}

/** 1/τ̂(T) in 1/s; zero at and above the start temperature. */
export function liRateAt(rate: LiRate, tempC: number): number {
  const under = rate.startC - tempC;
  if (!(under > 0)) return 0;
  const undercoolingTerm = rate.exponent === 2 ? under * under : under * under * under;
  return rate.prefactor * undercoolingTerm * Math.exp(-LI_Q_OVER_R_K / (tempC + KELVIN));
}

/** Isothermal time (s) to fraction X of the equilibrium amount at tempC; Infinity at/above the start temperature. */
export function liIsothermalTimeS(rate: LiRate, tempC: number, fraction: number): number {
  const r = liRateAt(rate, tempC);
  return r > 0 ? liS(fraction) / r : Infinity;
}

// ---------------------------------------------------------------------------------------------------------------
// S(X) and its inverse.
//
// The integrand f(x) = x^{−0.4(1−x)} (1−x)^{−0.4x} is symmetric about 1/2 and has integrable x^{−0.4} singularities
// at both ends. With x = w^{5/3} on [0, 1/2] the integrand becomes (5/3)·g(x), g(x) = x^{0.4x}(1−x)^{−0.4x}, which is
// bounded and smooth enough for Gauss–Legendre; the upper half follows from S(X) = S(1) − S(1 − X).

const GL_NODES = [-0.9602898564975363, -0.7966664774136267, -0.5255324099163290, -0.1834346424956498, 0.1834346424956498, 0.5255324099163290, 0.7966664774136267, 0.9602898564975363];
const GL_WEIGHTS = [0.1012285362903763, 0.2223810344533745, 0.3137066458778873, 0.3626837833783620, 0.3626837833783620, 0.3137066458778873, 0.2223810344533745, 0.1012285362903763];

function gOfX(x: number): number {
  if (x <= 0) return 1;
  return Math.exp(0.4 * x * (Math.log(x) - Math.log1p(-x)));
}

/** ∫ (5/3) g(w^{5/3}) dw over [w0, w1] by 8-point Gauss–Legendre on `panels` panels. */
function integrateW(w0: number, w1: number, panels: number): number {
  const h = (w1 - w0) / panels;
  let sum = 0;
  for (let p = 0; p < panels; p++) {
    const mid = w0 + (p + 0.5) * h;
    for (let k = 0; k < 8; k++) {
      const wv = mid + 0.5 * h * GL_NODES[k];
      sum += GL_WEIGHTS[k] * gOfX(Math.pow(wv, 5 / 3));
    }
  }
  return (5 / 3) * 0.5 * h * sum;
}

const W_HALF = Math.pow(0.5, 0.6);
const S_HALF = integrateW(0, W_HALF, 64);
/** S(1) = 2·S(1/2) ≈ 2.05176 (§8.4 [C]). */
export const LI_S_OF_ONE = 2 * S_HALF;

/** S(X), accurate to ~1e−10 (not for inner loops). */
export function liS(fraction: number): number {
  if (!(fraction > 0)) return 0;
  if (fraction >= 1) return LI_S_OF_ONE;
  if (fraction <= 0.5) return integrateW(0, Math.pow(fraction, 0.6), 48);
  return LI_S_OF_ONE - liS(1 - fraction);
}

// Inverse table: X on a uniform grid of s over [0, S(1)]. Built once at module load (≈ 1–2 ms) from a dense
// cumulative integral in w, so no root finding is needed.
const INV_TABLE_SIZE = 16384;
const INV_STEP = LI_S_OF_ONE / INV_TABLE_SIZE;
const INV_SCALE = INV_TABLE_SIZE / LI_S_OF_ONE;
const INV_TABLE: Float64Array = buildInverseTable();

/**
 * The inverse table itself, for inner loops that inline the lookup of liExtentFromSum (X at s = k/scale, k = 0..size).
 * Read-only by contract.
 */
export const LI_EXTENT_TABLE: { readonly scale: number; readonly size: number; readonly values: Float64Array } = {
  scale: INV_SCALE,
  size: INV_TABLE_SIZE,
  values: INV_TABLE,
};

function buildInverseTable(): Float64Array {
  // Lower half: cumulative s(w) on a dense w grid.
  const dense = 40000;
  const wStep = W_HALF / dense;
  const sAt = new Float64Array(dense + 1);
  for (let j = 1; j <= dense; j++) sAt[j] = sAt[j - 1] + integrateW((j - 1) * wStep, j * wStep, 1);
  const scale = S_HALF / sAt[dense]; // absorb the last-digit difference between the two quadratures
  const table = new Float64Array(INV_TABLE_SIZE + 1);
  const lowerX = (s: number): number => {
    // s in [0, S_HALF] → X in [0, 1/2]
    return Math.pow(lowerW(s), 5 / 3);
  };
  let j = 0;
  const lowerW = (s: number): number => {
    const target = s / scale;
    while (j < dense && sAt[j + 1] < target) j++;
    if (j >= dense) return W_HALF;
    const a = sAt[j];
    const b = sAt[j + 1];
    return (j + (b > a ? (target - a) / (b - a) : 0)) * wStep;
  };
  const half = INV_TABLE_SIZE / 2;
  for (let k = 0; k <= half; k++) table[k] = lowerX(k * INV_STEP);
  table[half] = 0.5;
  for (let k = half + 1; k <= INV_TABLE_SIZE; k++) table[k] = 1 - table[INV_TABLE_SIZE - k];
  return table;
}

/**
 * X = S⁻¹(s): the normalised extent reached after an additive sum s = Σ Δt/τ̂. Table lookup with linear
 * interpolation, absolute error < 1e−7; allocation-free, for inner loops.
 */
export function liExtentFromSum(s: number): number {
  if (!(s > 0)) return 0;
  if (s >= LI_S_OF_ONE) return 1;
  const pos = s * INV_SCALE;
  const i = pos | 0;
  const a = INV_TABLE[i];
  return a + (pos - i) * (INV_TABLE[i + 1] - a);
}
