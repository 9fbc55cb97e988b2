/**
 * Seeded randomness for the uncertainty ensemble. Nothing here touches Math.random: the same seed gives the same
 * numbers on every machine and every run, which is what lets a stored batch state be advanced later and still
 * give the bands it would have given from scratch.
 */

/** sfc32 (Chris Doty-Humphrey's Small Fast Chaotic PRNG, public domain), seeded through splitmix32. */
export class SeededRandom {
  private a: number;
  private b: number;
  private c: number;
  private d: number;

  constructor(seed: number) {
    let s = (Math.trunc(seed) ^ 0x9e3779b9) >>> 0;
    const next = (): number => {
      // splitmix32 step: spreads a small integer seed over all four words.
      s = (s + 0x9e3779b9) >>> 0;
      let z = s;
      z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
      z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
      return (z ^ (z >>> 16)) >>> 0;
    };
    this.a = next();
    this.b = next();
    this.c = next();
    this.d = next();
    for (let i = 0; i < 12; i++) this.nextUint32();
  }

  nextUint32(): number {
    const t = (((this.a + this.b) >>> 0) + this.d) >>> 0;
    this.d = (this.d + 1) >>> 0;
    this.a = this.b ^ (this.b >>> 9);
    this.b = (this.c + (this.c << 3)) >>> 0;
    this.c = (this.c << 21) | (this.c >>> 11);
    this.c = (this.c + t) >>> 0;
    return t;
  }

  /** Uniform on the open interval (0, 1). */
  nextUniform(): number {
    return (this.nextUint32() + 0.5) / 4294967296;
  }

  /** Integer in [0, n). */
  nextInt(n: number): number {
    return Math.floor(this.nextUniform() * n);
  }
}

// Acklam's coefficients (module-level: the function runs tens of thousands of times per ensemble build).
const ACKLAM_A = [-39.69683028665376, 220.9460984245205, -275.9285104469687, 138.357751867269, -30.66479806614716, 2.506628277459239];
const ACKLAM_B = [-54.47609879822406, 161.5858368580409, -155.6989798598866, 66.80131188771972, -13.28068155288572];
const ACKLAM_C = [-0.007784894002430293, -0.3223964580411365, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
const ACKLAM_D = [0.007784695709041462, 0.3224671290700398, 2.445134137142996, 3.754408661907416];

/** Inverse of the standard normal CDF: Acklam's rational approximation (relative error < 1.15e−9). */
export function inverseNormalCdf(p: number): number {
  if (!(p > 0 && p < 1)) {
    if (p === 0) return -Infinity;
    if (p === 1) return Infinity;
    return Number.NaN;
  }
  const a = ACKLAM_A;
  const b = ACKLAM_B;
  const c = ACKLAM_C;
  const d = ACKLAM_D;
  const pLow = 0.02425;
  if (p < pLow) {
    const q = Math.sqrt(-2 * Math.log(p));
    return (((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
  }
  if (p <= 1 - pLow) {
    const q = p - 0.5;
    const r = q * q;
    return ((((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * q) / (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1);
  }
  const q = Math.sqrt(-2 * Math.log(1 - p));
  return -(((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
}

/** Complementary error function (Numerical Recipes erfcc, fractional error < 1.2e−7 everywhere). */
export function erfc(x: number): number {
  const z = Math.abs(x);
  const t = 1 / (1 + 0.5 * z);
  const r =
    t *
    Math.exp(
      -z * z -
        1.26551223 +
        t * (1.00002368 + t * (0.37409196 + t * (0.09678418 + t * (-0.18628806 + t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))),
    );
  return x >= 0 ? r : 2 - r;
}

/** Standard normal CDF. */
export function normalCdf(x: number): number {
  return 0.5 * erfc(-x / Math.SQRT2);
}

/**
 * Latin hypercube sample of `n` points in `dims` dimensions on (0,1): each dimension is cut into n equal strata,
 * every stratum is used exactly once, and the strata are shuffled independently per dimension (McKay, Beckman &
 * Conover 1979). Returned column-major: result[dim][member].
 */
export function latinHypercube(n: number, dims: number, rng: SeededRandom): Float64Array[] {
  const columns: Float64Array[] = [];
  for (let d = 0; d < dims; d++) {
    const col = new Float64Array(n);
    for (let i = 0; i < n; i++) col[i] = (i + rng.nextUniform()) / n;
    // Fisher–Yates shuffle.
    for (let i = n - 1; i > 0; i--) {
      const j = Math.floor(rng.nextUniform() * (i + 1));
      const tmp = col[i];
      col[i] = col[j];
      col[j] = tmp;
    }
    columns.push(col);
  }
  return columns;
}

/** Percentile by linear interpolation between order statistics (Hyndman & Fan type 7, the spreadsheet default). */
export function percentileOfSorted(sorted: ArrayLike<number>, p: number): number {
  const n = sorted.length;
  if (n === 0) return Number.NaN;
  if (n === 1) return sorted[0];
  const h = (n - 1) * p;
  const lo = Math.floor(h);
  const hi = Math.min(n - 1, lo + 1);
  const a = sorted[lo];
  const b = sorted[hi];
  if (a === b) return a; // also keeps ±Infinity out of Infinity − Infinity
  return a + (h - lo) * (b - a);
}

/**
 * Type-7 percentiles of `values` without a full sort: quickselect (Hoare partition, median-of-three pivot) for the
 * two order statistics each percentile interpolates between. Reorders `values` in place. O(n) per percentile; the
 * result is identical to percentileOfSorted on the sorted array.
 */
export function percentilesInPlace(values: Float64Array, ps: readonly number[]): number[] {
  const n = values.length;
  return ps.map((p) => {
    if (n === 0) return Number.NaN;
    if (n === 1) return values[0];
    const h = (n - 1) * p;
    const lo = Math.floor(h);
    const a = selectInPlace(values, lo);
    if (lo + 1 >= n) return a;
    // the next order statistic is the smallest value right of the selected one
    let b = Infinity;
    for (let i = lo + 1; i < n; i++) if (values[i] < b) b = values[i];
    if (a === b) return a;
    return a + (h - lo) * (b - a);
  });
}

/** Puts the k-th smallest value at index k, smaller-or-equal values left of it, larger-or-equal right. */
export function selectInPlace(a: Float64Array, k: number): number {
  let left = 0;
  let right = a.length - 1;
  while (right > left) {
    const mid = (left + right) >> 1;
    // median of three as pivot
    const x = a[left];
    const y = a[mid];
    const z = a[right];
    const pivot = x < y ? (y < z ? y : x < z ? z : x) : x < z ? x : y < z ? z : y;
    let i = left;
    let j = right;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        const t = a[i];
        a[i] = a[j];
        a[j] = t;
        i++;
        j--;
      }
    }
    if (k <= j) right = j;
    else if (k >= i) left = i;
    else break;
  }
  return a[k];
}
