// Average run length (ARL) of the drift charts: numerical (Markov chain) and Monte-Carlo.
//
// * Tabular CUSUM: the Markov-chain approximation of Brook & Evans (1972, Biometrika 59, 539–548). The
//   one-sided sum on [0, h] is cut into m states of width w = 2h/(2m − 1): state 0 holds the atom at 0
//   (values below w/2), state j the interval ((j − ½)w, (j + ½)w], and everything above h absorbs (a
//   signal). ARLs from every state solve (I − R)·L = 1. A head start u (fast initial response) enters
//   through one extra first step from u: L(u) = 1 + Σⱼ P(u → j)·Lⱼ.
//   Two-sided: the relation of Kemp (1971) / Lucas & Crosier (1982),
//     1/L = 1/L⁺ + 1/L⁻  (no head start), and with head start s on both sides
//     L = [L⁺(s)·L⁻(0) + L⁻(s)·L⁺(0) − L⁺(0)·L⁻(0)] / [L⁺(0) + L⁻(0)],
//   both exact when the two sums are never positive together, and very close otherwise for k ≥ 0.5.
// * EWMA: the Markov chain of Lucas & Saccucci (1990, Technometrics 32, 1–12): the in-control region of
//   the standardised statistic, (−H, H) with H = L·√(λ/(2−λ)), is cut into an odd number m of equal
//   states, and each state is represented by its midpoint. The chart starts at the middle state (z₀ = 0).
//   With exact (time-varying) limits the chain is not homogeneous for the first lots; it is stepped
//   explicitly (transitions clipped at ±Hₜ) until Hₜ has converged to H, and the homogeneous solution
//   takes over from there — the approach of Steiner (1999, J. Quality Technology 31, 75–86).
// * Shewhart individuals chart: closed form 1/p with p = Φ(−L − δ) + 1 − Φ(L − δ).
// * Monte-Carlo: seeded simulation of the same charts (and of combinations of charts and run rules),
//   returning the standard error so that the two methods can be compared.
//
// Shifts δ are in σ units of the individual values. Zero-state ARLs throughout (chart starts at its
// initial state when the shift is already present), as in the published tables.

import { cusumInitialState, cusumUpdate, type CusumParameters } from './cusum.js';
import { ewmaHalfWidthSigma, ewmaSigmaFactor, type EwmaLimitMode } from './ewma.js';
import { solveDenseInPlace } from './linear-solve.js';
import { normalCdf } from './normal.js';
import { createSeededRandom } from './random.js';
import { RUN_RULE_MAX_WINDOW, runRuleHitsAtNewest, selectedRuleIds, type RunRuleSelection } from './run-rules.js';

/** Default number of Markov-chain states; the error of both chains falls roughly as 1/m². */
export const DEFAULT_CUSUM_STATES = 300;
export const DEFAULT_EWMA_STATES = 301;

// ---------------------------------------------------------------------------------------------- CUSUM

interface OneSidedCusumChain {
  w: number;
  m: number;
  /** ARL from each state. */
  arlByState: Float64Array;
}

function oneSidedCusumChain(k: number, h: number, shift: number, m: number): OneSidedCusumChain {
  const w = (2 * h) / (2 * m - 1);
  // P(i → j) depends only on d = j − i: F(d) = P(new value ≤ (j + ½)w | old = i·w) = Φ((d + ½)w + k − δ).
  const F = new Float64Array(2 * m + 1); // index d + m, d ∈ [−m, m]
  for (let d = -m; d <= m; d++) F[d + m] = normalCdf((d + 0.5) * w + k - shift);
  const a = new Float64Array(m * m);
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < m; j++) {
      const p = j === 0 ? F[-i + m] : F[j - i + m] - F[j - i - 1 + m];
      a[i * m + j] = (i === j ? 1 : 0) - p;
    }
  }
  const ones = new Float64Array(m).fill(1);
  return { w, m, arlByState: solveDenseInPlace(a, ones, m) };
}

function arlFromStart(chain: OneSidedCusumChain, k: number, shift: number, start: number): number {
  if (start === 0) return chain.arlByState[0];
  const { w, m, arlByState } = chain;
  let arl = 1;
  let below = normalCdf(w / 2 - start + k - shift);
  arl += below * arlByState[0];
  for (let j = 1; j < m; j++) {
    const upTo = normalCdf((j + 0.5) * w - start + k - shift);
    arl += (upTo - below) * arlByState[j];
    below = upTo;
  }
  return arl;
}

export interface CusumArlInput {
  k: number;
  h: number;
  /** Mean shift in σ units (0 for the in-control ARL). */
  shift: number;
  /** Head start in σ units (fast initial response); default 0. */
  headStart?: number;
  /** Markov-chain states; default DEFAULT_CUSUM_STATES. */
  states?: number;
}

export interface CusumArlResult {
  /** Two-sided ARL (signal when C⁺ > h or C⁻ > h). */
  twoSided: number;
  /** One-sided upper CUSUM ARL (detects increases). */
  upper: number;
  /** One-sided lower CUSUM ARL (detects decreases). */
  lower: number;
  method: 'markov-chain (Brook & Evans 1972)';
  states: number;
}

function checkCusumInput(input: CusumArlInput): void {
  if (!(input.k >= 0) || !Number.isFinite(input.k)) throw new RangeError('k must be a finite number ≥ 0');
  if (!(input.h > 0) || !Number.isFinite(input.h)) throw new RangeError('h must be a finite number > 0');
  if (!Number.isFinite(input.shift)) throw new RangeError('shift must be finite');
  const hs = input.headStart ?? 0;
  if (!(hs >= 0 && hs < input.h)) throw new RangeError('headStart must be in [0, h)');
}

/** CUSUM ARL by the Brook & Evans (1972) Markov chain; two-sided by the Lucas & Crosier (1982) relation. */
export function cusumArl(input: CusumArlInput): CusumArlResult {
  checkCusumInput(input);
  const m = input.states ?? DEFAULT_CUSUM_STATES;
  const hs = input.headStart ?? 0;
  const up = oneSidedCusumChain(input.k, input.h, input.shift, m);
  // The lower CUSUM under shift δ is the upper CUSUM under −δ (the same chain when δ = 0).
  const down = input.shift === 0 ? up : oneSidedCusumChain(input.k, input.h, -input.shift, m);
  const up0 = up.arlByState[0];
  const down0 = down.arlByState[0];
  const upS = arlFromStart(up, input.k, input.shift, hs);
  const downS = arlFromStart(down, input.k, -input.shift, hs);
  const twoSided = (upS * down0 + downS * up0 - up0 * down0) / (up0 + down0);
  return { twoSided, upper: upS, lower: downS, method: 'markov-chain (Brook & Evans 1972)', states: m };
}

// ----------------------------------------------------------------------------------------------- EWMA

export interface EwmaArlInput {
  lambda: number;
  L: number;
  shift: number;
  /** 'asymptotic' (default; the Lucas & Saccucci tables) or 'exact' time-varying limits. */
  limits?: EwmaLimitMode;
  /** Markov-chain states (odd); default DEFAULT_EWMA_STATES. */
  states?: number;
}

export interface EwmaArlResult {
  arl: number;
  method: 'markov-chain (Lucas & Saccucci 1990)' | 'non-homogeneous markov-chain (Steiner 1999)';
  states: number;
  /** For exact limits: number of lots stepped explicitly before the limits were treated as constant. */
  transientSteps: number;
}

function checkEwmaInput(input: EwmaArlInput): void {
  if (!(input.lambda > 0 && input.lambda <= 1)) throw new RangeError('lambda must be in (0, 1]');
  if (!(input.L > 0) || !Number.isFinite(input.L)) throw new RangeError('L must be a finite number > 0');
  if (!Number.isFinite(input.shift)) throw new RangeError('shift must be finite');
}

/** EWMA ARL by the Lucas & Saccucci (1990) Markov chain (asymptotic limits) or its time-varying extension. */
export function ewmaArl(input: EwmaArlInput): EwmaArlResult {
  checkEwmaInput(input);
  let m = input.states ?? DEFAULT_EWMA_STATES;
  if (m % 2 === 0) m += 1; // odd, so that the middle state's midpoint is exactly z₀ = 0
  const { lambda, shift } = input;
  const H = input.L * ewmaSigmaFactor(lambda, Number.POSITIVE_INFINITY);
  const w = (2 * H) / m;
  const mid = (m - 1) / 2;
  const centreOf = (i: number) => -H + (i + 0.5) * w;
  const edges = Float64Array.from({ length: m + 1 }, (_, e) => -H + e * w);
  // Cumulative transition: C[i][e] = P(z_new ≤ edge_e | z_old = c_i) = Φ((edge_e − (1−λ)c_i)/λ − δ).
  const C = new Float64Array(m * (m + 1));
  for (let i = 0; i < m; i++) {
    const base = (1 - lambda) * centreOf(i);
    for (let e = 0; e <= m; e++) C[i * (m + 1) + e] = normalCdf((edges[e] - base) / lambda - shift);
  }
  // One-step transition probabilities between states (row i → column j).
  const P = new Float64Array(m * m);
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < m; j++) P[i * m + j] = C[i * (m + 1) + j + 1] - C[i * (m + 1) + j];
  }
  const a = new Float64Array(m * m);
  for (let idx = 0; idx < m * m; idx++) a[idx] = -P[idx];
  for (let i = 0; i < m; i++) a[i * m + i] += 1;
  const homogeneous = solveDenseInPlace(a, new Float64Array(m).fill(1), m);
  if ((input.limits ?? 'asymptotic') === 'asymptotic') {
    return { arl: homogeneous[mid], method: 'markov-chain (Lucas & Saccucci 1990)', states: m, transientSteps: 0 };
  }

  // Exact limits: step the sub-stochastic state distribution while Hₜ < H (to 1e-10 relative), clipping
  // each transition at ±Hₜ, then hand over to the homogeneous ARL vector:
  //   ARL = Σ_{t<T} P(no signal in t lots) + Σᵢ pᵢ(T)·Lᵢ.
  // Only the two cells that straddle ±Hₜ need clipping; cells wholly inside use P, cells outside absorb.
  const T = Math.max(1, Math.ceil(Math.log(2e-10) / (2 * Math.log(1 - lambda))));
  let p = new Float64Array(m);
  p[mid] = 1;
  let arl = 0;
  for (let t = 1; t <= T; t++) {
    let survival = 0;
    for (let i = 0; i < m; i++) survival += p[i];
    arl += survival; // P(RL > t − 1)
    const Ht = ewmaHalfWidthSigma({ lambda, L: input.L, limits: 'exact' }, t);
    // Cells [jLo, jHi] intersect (−Hₜ, Hₜ); by symmetry jHi = m − 1 − jLo.
    const jLo = Math.min(mid, Math.max(0, Math.floor((-Ht + H) / w)));
    const jHi = m - 1 - jLo;
    const next = new Float64Array(m);
    for (let i = 0; i < m; i++) {
      const pi = p[i];
      if (pi === 0) continue;
      const row = i * m;
      if (jLo === jHi) {
        next[jLo] += pi * (normalCdf((Ht - (1 - lambda) * centreOf(i)) / lambda - shift) - normalCdf((-Ht - (1 - lambda) * centreOf(i)) / lambda - shift));
        continue;
      }
      const base = (1 - lambda) * centreOf(i);
      next[jLo] += pi * (C[i * (m + 1) + jLo + 1] - normalCdf((-Ht - base) / lambda - shift));
      for (let j = jLo + 1; j < jHi; j++) next[j] += pi * P[row + j];
      next[jHi] += pi * (normalCdf((Ht - base) / lambda - shift) - C[i * (m + 1) + jHi]);
    }
    p = next;
  }
  for (let i = 0; i < m; i++) arl += p[i] * homogeneous[i];
  return { arl, method: 'non-homogeneous markov-chain (Steiner 1999)', states: m, transientSteps: T };
}

// ------------------------------------------------------------------------------------------- Shewhart

/** ARL of a Shewhart individuals chart with limits ±L·σ under a shift δ (σ units): 1/p. */
export function shewhartArl(L: number, shift: number): number {
  const p = normalCdf(-L - shift) + (1 - normalCdf(L - shift));
  return 1 / p;
}

// --------------------------------------------------------------------------------- design by bisection

function bisect(f: (x: number) => number, lo: number, hi: number, tol: number): number {
  let flo = f(lo);
  for (let i = 0; i < 100 && hi - lo > tol; i++) {
    const mid = (lo + hi) / 2;
    const fm = f(mid);
    if (Math.sign(fm) === Math.sign(flo)) {
      lo = mid;
      flo = fm;
    } else hi = mid;
  }
  return (lo + hi) / 2;
}

/** EWMA limit width L that gives a target in-control ARL for a given λ (Markov chain, to ±1e-4). */
export function ewmaLimitWidthForArl0(lambda: number, targetArl0: number, limits: EwmaLimitMode = 'asymptotic'): number {
  if (!(targetArl0 > 1)) throw new RangeError('targetArl0 must exceed 1');
  return bisect((L) => ewmaArl({ lambda, L, shift: 0, limits, states: 201 }).arl - targetArl0, 1, 5, 1e-4);
}

/** CUSUM decision interval h that gives a target two-sided in-control ARL for a given k (to ±1e-4). */
export function cusumDecisionIntervalForArl0(k: number, targetArl0: number, headStartFraction = 0): number {
  if (!(targetArl0 > 1)) throw new RangeError('targetArl0 must exceed 1');
  return bisect((h) => cusumArl({ k, h, shift: 0, headStart: headStartFraction * h, states: 200 }).twoSided - targetArl0, 0.2, 25, 1e-4);
}

// ---------------------------------------------------------------------------------------- Monte-Carlo

export type SimulatedChart =
  | { chart: 'shewhart'; L: number }
  | { chart: 'ewma'; lambda: number; L: number; limits: EwmaLimitMode }
  | ({ chart: 'cusum' } & CusumParameters);

export interface MonteCarloArlInput {
  /** Charts run side by side on the same values; the run ends at the first signal of any of them. */
  charts: readonly SimulatedChart[];
  /** Run rules on the standardised individuals, also ending the run. */
  runRules?: RunRuleSelection;
  shift: number;
  runs: number;
  seed: number;
  /** Runs are cut at this length and counted as truncated (default 1e6). */
  maxRunLength?: number;
}

export interface MonteCarloArlResult {
  arl: number;
  /** Standard error of the ARL estimate: sd(run length)/√runs. */
  standardError: number;
  sdRunLength: number;
  runs: number;
  truncatedRuns: number;
  seed: number;
}

/** Seeded Monte-Carlo ARL of one chart or a combination, with its standard error. */
export function monteCarloArl(input: MonteCarloArlInput): MonteCarloArlResult {
  if (!Number.isInteger(input.runs) || input.runs < 2) throw new RangeError('runs must be an integer ≥ 2');
  if (input.charts.length === 0 && !input.runRules) throw new RangeError('nothing to simulate: give charts or runRules');
  const rng = createSeededRandom(input.seed);
  const maxRun = input.maxRunLength ?? 1_000_000;
  const ruleIds = input.runRules ? selectedRuleIds(input.runRules) : [];
  const basis = { centre: 0, sigma: 1 };
  let sum = 0;
  let sumSq = 0;
  let truncated = 0;
  for (let r = 0; r < input.runs; r++) {
    const ewmaZ = input.charts.map(() => 0);
    const cusumState = input.charts.map((c) => (c.chart === 'cusum' ? cusumInitialState(c) : null));
    const recent: number[] = [];
    let t = 0;
    let signalled = false;
    while (!signalled && t < maxRun) {
      t++;
      const x = rng.nextNormal() + input.shift;
      for (let c = 0; c < input.charts.length; c++) {
        const chart = input.charts[c];
        if (chart.chart === 'shewhart') {
          if (Math.abs(x) > chart.L) signalled = true;
        } else if (chart.chart === 'ewma') {
          const z = chart.lambda * x + (1 - chart.lambda) * ewmaZ[c];
          ewmaZ[c] = z;
          if (Math.abs(z) > ewmaHalfWidthSigma(chart, t)) signalled = true;
        } else {
          const p = cusumUpdate(cusumState[c]!, x, basis, chart);
          cusumState[c] = p;
          if (p.signal !== null) signalled = true;
        }
      }
      if (ruleIds.length > 0) {
        recent.push(x);
        if (recent.length > RUN_RULE_MAX_WINDOW) recent.shift();
        if (runRuleHitsAtNewest(recent, ruleIds).length > 0) signalled = true;
      }
    }
    if (!signalled) truncated++;
    sum += t;
    sumSq += t * t;
  }
  const n = input.runs;
  const arl = sum / n;
  const variance = Math.max(0, (sumSq - n * arl * arl) / (n - 1));
  const sd = Math.sqrt(variance);
  return { arl, standardError: sd / Math.sqrt(n), sdRunLength: sd, runs: n, truncatedRuns: truncated, seed: input.seed };
}
