// Standard normal distribution functions for the run-length computations.
//
// The Markov-chain ARL methods (Brook & Evans 1972, Lucas & Saccucci 1990) need Φ to near machine
// precision: a transition probability is a difference of two Φ values, and the ARL is the solution
// of a linear system built from thousands of them. Rather than trust a table of rational-approximation
// coefficients typed from memory, Φ is computed from two classical expansions of the error function
// whose terms need no stored constants:
//   * |x| ≤ 3 : erf(x) = (2/√π)·e^(−x²)·Σ 2ⁿ x^(2n+1) / (1·3·5···(2n+1))   (all terms positive, so no
//               cancellation; Abramowitz & Stegun 7.1.6)
//   * x > 3  : erfc(x) by its Laplace continued fraction, evaluated with the modified Lentz method
//               (A&S 7.1.14), which keeps full relative precision in the far tail.

const SQRT_PI = Math.sqrt(Math.PI);
const SQRT2 = Math.SQRT2;
const SERIES_LIMIT = 3;

/** erf(x) for 0 ≤ x ≤ 3 by the A&S 7.1.6 series. */
function erfSeries(x: number): number {
  const x2 = x * x;
  let term = x; // n = 0 term: x / 1
  let sum = term;
  for (let n = 1; n < 200; n++) {
    term *= (2 * x2) / (2 * n + 1);
    sum += term;
    if (term < sum * 1e-17) break;
  }
  return ((2 / SQRT_PI) * Math.exp(-x2) * sum);
}

/** erfc(x) for x > 3 by the continued fraction erfc(x) = e^(−x²)/√π · 1/(x + (1/2)/(x + 1/(x + (3/2)/(x + …)))). */
function erfcContinuedFraction(x: number): number {
  // Modified Lentz: f = b0 + a1/(b1 + a2/(b2 + …)) with b_j = x, a_j = j/2.
  const tiny = 1e-300;
  let f = x;
  let c = x;
  let d = 0;
  for (let j = 1; j < 500; j++) {
    const a = j / 2;
    d = x + a * d;
    d = Math.abs(d) < tiny ? tiny : d;
    c = x + a / c;
    c = Math.abs(c) < tiny ? tiny : c;
    d = 1 / d;
    const delta = c * d;
    f *= delta;
    if (Math.abs(delta - 1) < 1e-16) break;
  }
  return Math.exp(-x * x) / SQRT_PI / f;
}

/** Complementary error function, accurate to a few ulps in absolute terms and relative terms in the upper tail. */
export function erfc(x: number): number {
  if (Number.isNaN(x)) return Number.NaN;
  if (x < 0) return 2 - erfc(-x);
  if (x <= SERIES_LIMIT) return 1 - erfSeries(x);
  if (x > 27) return 0; // e^(−729) underflows
  return erfcContinuedFraction(x);
}

/** Standard normal cumulative distribution function Φ(z). */
export function normalCdf(z: number): number {
  if (z === Number.POSITIVE_INFINITY) return 1;
  if (z === Number.NEGATIVE_INFINITY) return 0;
  const x = -z / SQRT2;
  // For z ≥ 0 use the series directly on erf to keep the centre region free of 1 − (1 − …) losses.
  if (x <= 0 && -x <= SERIES_LIMIT) return 0.5 + 0.5 * erfSeries(-x);
  return 0.5 * erfc(x);
}

/** Upper tail 1 − Φ(z), with full relative precision for large z. */
export function normalSf(z: number): number {
  return normalCdf(-z);
}

/** Standard normal density φ(z). */
export function normalPdf(z: number): number {
  return Math.exp(-0.5 * z * z) / Math.sqrt(2 * Math.PI);
}
