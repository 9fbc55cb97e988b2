/**
 * Magnetic contribution to the Gibbs energy (Inden; Hillert & Jarl 1978), metallurgy.md §2.1
 * [F2 – coefficients confirmed against a public MATLAB T0 code]:
 *   G_mag = R T ln(β + 1) f(τ),  τ = T / T_C
 *   D = 518/1125 + (11692/15975)(1/p − 1)
 *   τ < 1 : f = 1 − [ 79/(140 p τ) + (474/497)(1/p − 1)(τ³/6 + τ⁹/135 + τ¹⁵/600) ] / D
 *   τ ≥ 1 : f = − [ τ⁻⁵/10 + τ⁻¹⁵/315 + τ⁻²⁵/1500 ] / D
 * p = 0.40 for bcc, 0.28 for fcc. Negative (antiferromagnetic) T_C and β are divided by the AFM factor
 * (−1 bcc, −3 fcc) – §9.4 trap. G_mag = 0 when T_C ≤ 0 or β ≤ 0 after that.
 */

export const R_J_PER_MOL_K = 8.31451;

export type MagneticStructure = 'bcc' | 'fcc';

interface MagneticConstants {
  p: number;
  afm: number;
  /** coefficients of f for τ < 1: 1 − a1/τ − a3 τ³ − a9 τ⁹ − a15 τ¹⁵ */
  a1: number;
  a3: number;
  a9: number;
  a15: number;
  /** coefficients of f for τ ≥ 1: −(b5 τ⁻⁵ + b15 τ⁻¹⁵ + b25 τ⁻²⁵) */
  b5: number;
  b15: number;
  b25: number;
}

function constantsFor(p: number, afm: number): MagneticConstants {
  const D = 518 / 1125 + (11692 / 15975) * (1 / p - 1);
  const k = (474 / 497) * (1 / p - 1);
  return {
    p,
    afm,
    a1: 79 / (140 * p) / D,
    a3: k / 6 / D,
    a9: k / 135 / D,
    a15: k / 600 / D,
    b5: 1 / 10 / D,
    b15: 1 / 315 / D,
    b25: 1 / 1500 / D,
  };
}

export const MAGNETIC: Readonly<Record<MagneticStructure, MagneticConstants>> = {
  bcc: constantsFor(0.4, -1),
  fcc: constantsFor(0.28, -3),
};

/** Inden/Hillert–Jarl f(τ). */
export function magneticF(tau: number, structure: MagneticStructure): number {
  const m = MAGNETIC[structure];
  if (tau < 1) {
    const t3 = tau * tau * tau;
    const t9 = t3 * t3 * t3;
    const t15 = t9 * t3 * t3;
    return 1 - m.a1 / tau - m.a3 * t3 - m.a9 * t9 - m.a15 * t15;
  }
  const i5 = 1 / (tau * tau * tau * tau * tau);
  const i15 = i5 * i5 * i5;
  const i25 = i15 * i5 * i5;
  return -(m.b5 * i5 + m.b15 * i15 + m.b25 * i25);
}

/**
 * G_mag in J/mol for composition-weighted (raw) T_C and β as they come out of the parameter sums, i.e. before the
 * AFM division. Divides a negative value by the structure's AFM factor.
 */
export function magneticGibbs(tempK: number, rawCurieK: number, rawBeta: number, structure: MagneticStructure): number {
  const afm = MAGNETIC[structure].afm;
  const tc = rawCurieK < 0 ? rawCurieK / afm : rawCurieK;
  const beta = rawBeta < 0 ? rawBeta / afm : rawBeta;
  if (tc <= 0 || beta <= 0) return 0;
  return R_J_PER_MOL_K * tempK * Math.log(beta + 1) * magneticF(tempK / tc, structure);
}
