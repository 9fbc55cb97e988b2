// Quantiles the calibrated bands need: the standard normal and Student's t (any real degrees of freedom,
// because a discounted update leaves fractional ones).
//
// Like drift/normal.ts, nothing here is a table of fitted coefficients typed from memory:
//   * ln Γ by Stirling's series, whose coefficients are the Bernoulli numbers B₂ₙ/(2n(2n−1)) = 1/12,
//     −1/360, 1/1260, −1/1680, 1/1188 (exact rationals), after shifting the argument above 15 with the
//     recurrence Γ(x+1) = xΓ(x) (Abramowitz & Stegun 6.1.40, 6.1.15);
//   * the regularised incomplete beta I_x(a, b) by its continued fraction (A&S 26.5.8), evaluated with
//     the modified Lentz method, using the symmetry I_x(a,b) = 1 − I_{1−x}(b,a) where it converges slowly;
//   * the t distribution function from I_x: P(T ≤ t) = 1 − ½·I_{ν/(ν+t²)}(ν/2, ½) for t ≥ 0 (A&S 26.7.1);
//   * quantiles by safeguarded Newton steps on the distribution function (bisection fallback).

import { normalCdf, normalPdf } from '../drift/normal.js';

const HALF_LN_2PI = 0.5 * Math.log(2 * Math.PI);

/** ln Γ(x) for x > 0. */
export function lnGamma(x: number): number {
  if (!(x > 0)) throw new RangeError(`lnGamma: x must be positive, got ${x}`);
  let shift = 0;
  let y = x;
  while (y < 15) {
    shift += Math.log(y);
    y += 1;
  }
  const inv = 1 / y;
  const inv2 = inv * inv;
  const series = inv * (1 / 12 + inv2 * (-1 / 360 + inv2 * (1 / 1260 + inv2 * (-1 / 1680 + inv2 * (1 / 1188)))));
  return (y - 0.5) * Math.log(y) - y + HALF_LN_2PI + series - shift;
}

function betaContinuedFraction(x: number, a: number, b: number): number {
  const tiny = 1e-300;
  let c = 1;
  let d = 1 - ((a + b) * x) / (a + 1);
  d = Math.abs(d) < tiny ? tiny : d;
  d = 1 / d;
  let f = d;
  for (let m = 1; m < 10_000; m++) {
    const m2 = 2 * m;
    // even step
    let num = (m * (b - m) * x) / ((a + m2 - 1) * (a + m2));
    d = 1 + num * d;
    d = Math.abs(d) < tiny ? tiny : d;
    c = 1 + num / c;
    c = Math.abs(c) < tiny ? tiny : c;
    d = 1 / d;
    f *= d * c;
    // odd step
    num = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + m2 + 1));
    d = 1 + num * d;
    d = Math.abs(d) < tiny ? tiny : d;
    c = 1 + num / c;
    c = Math.abs(c) < tiny ? tiny : c;
    d = 1 / d;
    const delta = d * c;
    f *= delta;
    if (Math.abs(delta - 1) < 1e-15) break;
  }
  return f;
}

/** Regularised incomplete beta function I_x(a, b), 0 ≤ x ≤ 1, a, b > 0. */
export function regularizedIncompleteBeta(x: number, a: number, b: number): number {
  if (!(a > 0) || !(b > 0)) throw new RangeError('regularizedIncompleteBeta: a and b must be positive');
  if (!(x >= 0 && x <= 1)) throw new RangeError('regularizedIncompleteBeta: x must be in [0, 1]');
  if (x === 0) return 0;
  if (x === 1) return 1;
  const lnFront = lnGamma(a + b) - lnGamma(a) - lnGamma(b) + a * Math.log(x) + b * Math.log(1 - x);
  const front = Math.exp(lnFront);
  if (x < (a + 1) / (a + b + 2)) return (front * betaContinuedFraction(x, a, b)) / a;
  return 1 - (front * betaContinuedFraction(1 - x, b, a)) / b;
}

/** Student's t distribution function P(T ≤ t) with ν > 0 degrees of freedom (ν = ∞ gives Φ). */
export function studentTCdf(t: number, dof: number): number {
  if (!(dof > 0)) throw new RangeError(`studentTCdf: degrees of freedom must be positive, got ${dof}`);
  if (!Number.isFinite(dof)) return normalCdf(t);
  if (t === 0) return 0.5;
  const tail = 0.5 * regularizedIncompleteBeta(dof / (dof + t * t), dof / 2, 0.5);
  return t > 0 ? 1 - tail : tail;
}

/** Student's t density. */
export function studentTPdf(t: number, dof: number): number {
  if (!Number.isFinite(dof)) return normalPdf(t);
  const lnC = lnGamma((dof + 1) / 2) - lnGamma(dof / 2) - 0.5 * Math.log(dof * Math.PI);
  return Math.exp(lnC - ((dof + 1) / 2) * Math.log(1 + (t * t) / dof));
}

function invert(p: number, cdf: (x: number) => number, pdf: (x: number) => number, what: string): number {
  if (!(p > 0 && p < 1)) throw new RangeError(`${what}: p must be in (0, 1), got ${p}`);
  if (p === 0.5) return 0;
  // Bracket, then Newton steps kept inside the bracket (bisection when a step would leave it).
  let lo = -1;
  let hi = 1;
  while (cdf(lo) > p) lo *= 2;
  while (cdf(hi) < p) hi *= 2;
  let x = 0;
  for (let i = 0; i < 200; i++) {
    const f = cdf(x) - p;
    if (f > 0) hi = x;
    else lo = x;
    const d = pdf(x);
    let next = d > 0 ? x - f / d : Number.NaN;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (Math.abs(next - x) <= 1e-13 * Math.max(1, Math.abs(next))) return next;
    x = next;
  }
  return x;
}

/** Standard normal quantile Φ⁻¹(p). */
export function normalQuantile(p: number): number {
  return invert(p, normalCdf, normalPdf, 'normalQuantile');
}

/** Student's t quantile with ν > 0 degrees of freedom (ν = ∞ gives Φ⁻¹). */
export function studentTQuantile(p: number, dof: number): number {
  if (!(dof > 0)) throw new RangeError(`studentTQuantile: degrees of freedom must be positive, got ${dof}`);
  if (!Number.isFinite(dof)) return normalQuantile(p);
  return invert(p, (t) => studentTCdf(t, dof), (t) => studentTPdf(t, dof), 'studentTQuantile');
}
