/**
 * Bainite kinetics over the logged bath history, for the nominal model and every ensemble member at once, as a
 * plain JSON-serialisable state that is advanced by new slices of samples.
 *
 * Model (metallurgy.md §3.1, §3.4):
 *   part temperature  T(t) = logged bath temperature + the centre's excess over the bath from the quench
 *                     simulation (zero once the centre has reached the bath) + the member's thermocouple error
 *   extent clock      s(t) = ∫ dt / τ̂_B(T)    (Li 1998 additivity; exact because Li's τ is separable); it stops
 *                     counting once past S(1), where the extent is 1 for good
 *   normalised extent ξ = S⁻¹(s)
 *   bainite           v(t) = max over the history of L(T)·ξ, as a fraction of the austenite pool, where
 *                     L(T) = (C_T0′(T) − C̄)/(C_T0′(T) − s_b) is the lever-rule ceiling at the CURRENT temperature;
 *                     bainite never reverts, so a rise in temperature stops growth (stasis) without undoing it.
 *   austenite carbon  by mass balance (§5.1), which at v = L gives exactly C_T0′: the "stop when x_γ ≥ x_T0′" rule.
 *
 * Time integration: samples are joined linearly and cut into cells on a fixed absolute grid (20 s by default).
 * Within a cell, ∫ r(T(t)) dt is integrated exactly for the piecewise-linear path up to second order in the
 * temperature deviation from the cell mean: ∫r ≈ r(T̄)·Δt + ½ r''(T̄)·∫(T − T̄)² dt (the first-order term vanishes
 * by construction). When the temperature spans more than SMOOTH_CELL_RANGE_C inside a cell (the centre still
 * cooling), each sample segment is its own sub-step. Cells are processed in order, and a cell's samples are kept in
 * the state until it closes, so advancing in any pieces performs the very same floating-point operations as
 * one run over the whole history: incremental equals from scratch (to the last bit, tested).
 */
import { batchModel, type BatchModel } from '../ensemble.js';
import { computeQuenchSummary, type QuenchSummary } from '../cooling/quenchSummary.js';
import type { BatchSetup } from '../setup.js';
import { MODEL_VERSION } from '../version.js';
import { KELVIN, LI_EXTENT_TABLE, LI_Q_OVER_R_K, LI_S_OF_ONE } from './li1998.js';
import { ensureT0Table, type T0Table } from './t0Table.js';

export const BATH_STATE_FORMAT = 'ausline.bath-state/1';
export const DEFAULT_CELL_S = 20;
/** A cell whose temperatures span more than this is integrated per sample segment. */
export const SMOOTH_CELL_RANGE_C = 4;
/** Time to 95 % of the ceiling is only defined where the ceiling is at least this. */
export const MIN_MEANINGFUL_CEILING = 0.005;
/** Gap in the bath log above which a warning is raised, s. */
export const LONG_GAP_S = 60;

export type BathSample = [tS: number, tempC: number];

export interface BathState {
  format: typeof BATH_STATE_FORMAT;
  modelVersion: string;
  setup: BatchSetup;
  cellS: number;
  t0Table: T0Table | null;
  quench: QuenchSummary | null;
  /** Last logged sample taken in. */
  last: { tS: number; loggedC: number } | null;
  /** Open cell: index and its points (tS, part °C) flattened, starting at the cell start or the first sample. */
  cell: { index: number; points: number[] };
  log: {
    samples: number;
    ignored: number;
    firstTS: number | null;
    /** ∫ dt and ∫ T dt of the LOGGED bath temperature (trapezoid). */
    sumDtS: number;
    sumTempDtCS: number;
    minC: number | null;
    maxC: number | null;
    maxGapS: number;
  };
  /** Lowest cell-mean part temperature seen (martensite in the bath if below Ms). */
  partMinC: number | null;
  kin: {
    /** Per member (index 0 nominal): extent clock, pool bainite fraction, last gap to 95 % of ceiling, time to 95 % (−1 = not yet). */
    sum: number[];
    v: number[];
    gap: number[];
    time95S: number[];
    /** Time of the last closed cell end, s. */
    tS: number;
  };
  /** Nominal pool bainite fraction at each closed cell end, flattened (tS, v). */
  curve: number[];
}

export function createBathState(setup: BatchSetup, opts: { cellS?: number } = {}): BathState {
  const model = batchModel(setup);
  const n = model.size;
  return {
    format: BATH_STATE_FORMAT,
    modelVersion: MODEL_VERSION,
    setup,
    cellS: opts.cellS ?? DEFAULT_CELL_S,
    t0Table: null,
    quench: null,
    last: null,
    cell: { index: 0, points: [] },
    log: { samples: 0, ignored: 0, firstTS: null, sumDtS: 0, sumTempDtCS: 0, minC: null, maxC: null, maxGapS: 0 },
    partMinC: null,
    kin: { sum: new Array(n).fill(0), v: new Array(n).fill(0), gap: new Array(n).fill(-1), time95S: new Array(n).fill(-1), tS: 0 },
    curve: [],
  };
}

/** Working (typed-array) copy of the kinetic state. */
interface Kin {
  sum: Float64Array;
  v: Float64Array;
  gap: Float64Array;
  time95S: Float64Array;
}

function kinFrom(state: BathState): Kin {
  return {
    sum: Float64Array.from(state.kin.sum),
    v: Float64Array.from(state.kin.v),
    gap: Float64Array.from(state.kin.gap),
    time95S: Float64Array.from(state.kin.time95S),
  };
}

/**
 * Advances the state by new logged samples [tS, tempC] (tS in s from the load entering the bath). Pure: returns a
 * new state. Samples at or before the last one taken in are ignored (a re-sent slice is harmless).
 */
export function advanceBath(state: BathState, samples: ReadonlyArray<readonly [number, number]>): BathState {
  if (state.format !== BATH_STATE_FORMAT) throw new TypeError(`advanceBath: not a bath state (format ${String(state.format)})`);
  const model = batchModel(state.setup);
  const s: BathState = {
    ...state,
    cell: { index: state.cell.index, points: state.cell.points.slice() },
    log: { ...state.log },
    last: state.last ? { ...state.last } : null,
    kin: { ...state.kin },
    curve: state.curve.slice(),
  };
  const kin = kinFrom(state);
  const ctx: CellContext = { model, state: s, kin };

  for (let i = 0; i < samples.length; i++) {
    const sample = samples[i];
    const t = sample[0];
    const logged = sample[1];
    if (!Number.isFinite(t) || !Number.isFinite(logged)) throw new RangeError(`advanceBath: sample ${i} is not a pair of finite numbers`);
    if (t < 0) throw new RangeError(`advanceBath: sample ${i} has tS ${t} < 0 (tS counts from the load entering the bath)`);
    if (s.last && t <= s.last.tS) {
      s.log.ignored++;
      continue;
    }
    if (!s.last) {
      s.quench = computeQuenchSummary(model, logged);
      s.log.firstTS = t;
      // The log may start a little after the load went in: hold the first reading back to tS = 0.
      s.last = { tS: 0, loggedC: logged };
      s.cell = { index: 0, points: [0, logged + excessAt(s.quench, 0)] };
      s.log.minC = logged;
      s.log.maxC = logged;
      if (t === 0) {
        s.log.samples++;
        continue;
      }
    }
    addLoggedSample(ctx, t, logged);
  }

  s.kin = { sum: Array.from(kin.sum), v: Array.from(kin.v), gap: Array.from(kin.gap), time95S: Array.from(kin.time95S), tS: s.kin.tS };
  return s;
}

function excessAt(q: QuenchSummary, tS: number): number {
  const { stepS, excessC } = q.excess;
  const p = tS / stepS;
  if (p >= excessC.length - 1) return 0;
  const j = Math.floor(p);
  return excessC[j] + (p - j) * (excessC[j + 1] - excessC[j]);
}

interface CellContext {
  model: BatchModel;
  state: BathState;
  kin: Kin;
}

function addLoggedSample(ctx: CellContext, t: number, logged: number): void {
  const s = ctx.state;
  const last = s.last as { tS: number; loggedC: number };
  const q = s.quench as QuenchSummary;
  const dt = t - last.tS;
  s.log.samples++;
  s.log.sumDtS += dt;
  s.log.sumTempDtCS += 0.5 * (last.loggedC + logged) * dt;
  if (logged < (s.log.minC as number)) s.log.minC = logged;
  if (logged > (s.log.maxC as number)) s.log.maxC = logged;
  if (dt > s.log.maxGapS) s.log.maxGapS = dt;
  // While the centre is still above the bath, follow its (non-linear) excess at the table's resolution.
  const excessEnd = (q.excess.excessC.length - 1) * q.excess.stepS;
  if (last.tS < excessEnd) {
    const step = q.excess.stepS;
    for (let g = (Math.floor(last.tS / step) + 1) * step; g < t && g < excessEnd; g += step) {
      const loggedAtG = last.loggedC + ((g - last.tS) / dt) * (logged - last.loggedC);
      addPoint(ctx, g, loggedAtG + excessAt(q, g));
    }
  }
  addPoint(ctx, t, logged + excessAt(q, t));
  s.last = { tS: t, loggedC: logged };
}

function addPoint(ctx: CellContext, t: number, partC: number): void {
  const s = ctx.state;
  const cellS = s.cellS;
  for (;;) {
    const pts = s.cell.points;
    const end = (s.cell.index + 1) * cellS;
    if (t < end) break;
    const tPrev = pts[pts.length - 2];
    const cPrev = pts[pts.length - 1];
    const cEnd = t === end ? partC : cPrev + ((end - tPrev) / (t - tPrev)) * (partC - cPrev);
    pts.push(end, cEnd);
    processCell(ctx, pts, end, true);
    s.cell = { index: s.cell.index + 1, points: [end, cEnd] };
  }
  const pts = s.cell.points;
  if (t > pts[pts.length - 2]) pts.push(t, partC);
}

// Hot-loop constants as module-local values (imported bindings may be compiled to getters by some loaders).
const Q_OVER_R = LI_Q_OVER_R_K;
const ABS_ZERO_OFFSET = KELVIN;
const EXTENT_VALUES = LI_EXTENT_TABLE.values;
const EXTENT_SCALE = LI_EXTENT_TABLE.scale;
const EXTENT_SIZE = LI_EXTENT_TABLE.size;
const EXTENT_CLOCK_END = LI_S_OF_ONE;

// Scratch buffers for sub-steps (reused; no allocation per cell).
let subDt = new Float64Array(64);
let subMean = new Float64Array(64);
let subVar = new Float64Array(64);

function ensureScratch(n: number): void {
  if (subDt.length >= n) return;
  const size = Math.max(n, subDt.length * 2);
  subDt = new Float64Array(size);
  subMean = new Float64Array(size);
  subVar = new Float64Array(size);
}

/** Lever-rule ceilings of every member on the T0 table grid, member-major (memoised per table extent). */
function leverTable(model: BatchModel, table: T0Table): Float64Array {
  const len = table.t0Calphad.length;
  const key = `lever:${table.fromC}:${len}`;
  const hit = model.cache.get(key) as Float64Array | undefined;
  if (hit) return hit;
  for (const k of model.cache.keys()) if (k.startsWith('lever:')) model.cache.delete(k);
  const n = model.size;
  const m = model.members;
  const bias = model.setup.calibration?.t0PrimeBiasWtPct ?? 0;
  const out = new Float64Array(n * len);
  const E = model.t0Elements.length;
  for (let k = 0; k < n; k++) {
    const cBar = m.carbonWtPct[k];
    const sb = m.carbonInFerriteWtPct[k];
    const mix = m.descriptionMix[k];
    const es = m.storedEnergyScale[k] - 1;
    const off = m.t0PrimeOffsetWtPct[k];
    for (let j = 0; j < len; j++) {
      const tp = table.t0PrimeCalphad[j];
      let c = tp + mix * (table.t0PrimeAlt[j] - tp) + es * (tp - table.t0Calphad[j]) + bias + off;
      for (let e = 0; e < E; e++) c += table.sensitivity[e][j] * m.t0ElementDelta[e][k];
      const lever = c > cBar ? (c - cBar) / (c - sb) : 0;
      out[k * len + j] = lever > 1 ? 1 : lever;
    }
  }
  model.cache.set(key, out);
  return out;
}

/** Largest |thermocouple offset| and highest bainite start over the members (for the T0 table range). */
function memberSpan(model: BatchModel): { maxOffsetC: number; maxBsC: number } {
  const key = 'span';
  const hit = model.cache.get(key) as { maxOffsetC: number; maxBsC: number } | undefined;
  if (hit) return hit;
  let maxOffsetC = 0;
  let maxBsC = -Infinity;
  for (let k = 0; k < model.size; k++) {
    maxOffsetC = Math.max(maxOffsetC, Math.abs(model.members.thermocoupleOffsetC[k]));
    maxBsC = Math.max(maxBsC, model.members.bainiteStartC[k]);
  }
  const span = { maxOffsetC, maxBsC };
  model.cache.set(key, span);
  return span;
}

/**
 * Integrates one cell (points = flattened (t, T) from the cell start to `endS`) for every member.
 * `record` = a real closed cell (appends to the nominal curve); false for the provisional open cell.
 */
function processCell(ctx: CellContext, pts: number[], endS: number, record: boolean): void {
  const { model, state, kin } = ctx;
  const nPts = pts.length / 2;
  if (nPts < 2) return;
  // Moments of the piecewise-linear path about the first point.
  const ref = pts[1];
  let m0 = 0;
  let m1 = 0;
  let m2 = 0;
  let lo = ref;
  let hi = ref;
  for (let i = 1; i < nPts; i++) {
    const dt = pts[2 * i] - pts[2 * i - 2];
    const a = pts[2 * i - 1] - ref;
    const b = pts[2 * i + 1] - ref;
    m0 += dt;
    m1 += (dt * (a + b)) / 2;
    m2 += (dt * (a * a + a * b + b * b)) / 3;
    const c = pts[2 * i + 1];
    if (c < lo) lo = c;
    if (c > hi) hi = c;
  }
  if (!(m0 > 0)) return;
  const meanC = ref + m1 / m0;
  let nSub: number;
  if (hi - lo <= SMOOTH_CELL_RANGE_C) {
    ensureScratch(1);
    subDt[0] = m0;
    subMean[0] = meanC;
    subVar[0] = Math.max(0, m2 - (m1 * m1) / m0);
    nSub = 1;
  } else {
    ensureScratch(nPts);
    nSub = 0;
    for (let i = 1; i < nPts; i++) {
      const dt = pts[2 * i] - pts[2 * i - 2];
      if (!(dt > 0)) continue;
      const a = pts[2 * i - 1];
      const b = pts[2 * i + 1];
      subDt[nSub] = dt;
      subMean[nSub] = 0.5 * (a + b);
      subVar[nSub] = (dt * (b - a) * (b - a)) / 12;
      nSub++;
    }
  }
  if (state.partMinC === null || meanC < state.partMinC) state.partMinC = meanC;

  // Make sure the T0 table covers every temperature a member can see with a non-zero rate.
  const span = memberSpan(model);
  const needLo = lo - span.maxOffsetC - 10;
  const needHi = Math.min(hi, span.maxBsC) + span.maxOffsetC + 10;
  if (needLo < needHi) state.t0Table = ensureT0Table(state.t0Table, model.chem, model.t0Elements, needLo, needHi);
  const table = state.t0Table;
  if (!table) {
    // Every member is above its bainite start: nothing can form in this cell.
    if (record) {
      state.kin.tS = endS;
      state.curve.push(endS, kin.v[0]);
    }
    return;
  }
  const lever = leverTable(model, table);
  const len = table.t0Calphad.length;
  const fromC = table.fromC;
  const invStep = 1 / table.stepC;
  const topC = fromC + (len - 1) * table.stepC;

  const m = model.members;
  const offset = m.thermocoupleOffsetC;
  const pref = m.bainitePrefactor;
  const bs = m.bainiteStartC;
  const sum = kin.sum;
  const vArr = kin.v;
  const gapArr = kin.gap;
  const t95 = kin.time95S;
  const tPrevEnd = state.kin.tS;
  const n = model.size;

  for (let k = 0; k < n; k++) {
    const d = offset[k];
    const P = pref[k];
    const B = bs[k];
    const base = k * len;
    let sk = sum[k];
    let vk = vArr[k];
    // Ceiling at the last sub-step's temperature, kept for the 95 % test below (-1 = not evaluated).
    let lastL = -1;
    for (let j = 0; j < nSub; j++) {
      const T = subMean[j] + d;
      const u = B - T;
      if (!(u > 0) || T > topC) {
        lastL = -1;
        continue;
      }
      // Once the clock is past S(1) the extent is 1 for good: skip the rate (most members, late in a batch).
      if (sk < EXTENT_CLOCK_END) {
        const K = T + ABS_ZERO_OFFSET;
        const r = P * u * u * Math.exp(-Q_OVER_R / K);
        let inc = r * subDt[j];
        if (u > 10) {
          const g1 = -2 / u + Q_OVER_R / (K * K);
          const g2 = -2 / (u * u) - (2 * Q_OVER_R) / (K * K * K);
          inc += 0.5 * r * (g1 * g1 + g2) * subVar[j];
          if (inc < 0) inc = 0;
        }
        sk += inc;
      }
      // Ceiling at the current temperature (linear interpolation on the member's lever table).
      let p = (T - fromC) * invStep;
      if (p < 0) p = 0;
      let i0 = p | 0;
      if (i0 > len - 2) i0 = len - 2;
      const L = lever[base + i0] + (p - i0) * (lever[base + i0 + 1] - lever[base + i0]);
      lastL = L;
      // ξ = S⁻¹(s), inlined table lookup of liExtentFromSum.
      let xi: number;
      const ps = sk * EXTENT_SCALE;
      if (ps >= EXTENT_SIZE) xi = 1;
      else {
        const is = ps | 0;
        xi = EXTENT_VALUES[is] + (ps - is) * (EXTENT_VALUES[is + 1] - EXTENT_VALUES[is]);
      }
      const cand = L * xi;
      if (cand > vk) vk = cand;
    }
    sum[k] = sk;
    vArr[k] = vk;
    // Time to 95 % of the ceiling at the cell's last temperature, interpolated between cell ends.
    if (t95[k] < 0) {
      if (lastL >= MIN_MEANINGFUL_CEILING) {
        const gap = vk - 0.95 * lastL;
        if (gap >= 0) {
          const gp = gapArr[k];
          t95[k] = gp < 0 && gap > gp ? tPrevEnd + ((endS - tPrevEnd) * -gp) / (gap - gp) : endS;
        }
        gapArr[k] = gap;
      } else gapArr[k] = -1;
    }
  }
  if (record) {
    state.kin.tS = endS;
    state.curve.push(endS, vArr[0]);
  }
}

/** The kinetic state at the last sample: the open cell integrated provisionally (the stored state is untouched). */
export interface BathProgress {
  model: BatchModel;
  /** s from bath entry to the last sample. */
  endS: number;
  sum: Float64Array;
  v: Float64Array;
  time95S: Float64Array;
  /** Nominal (tS, pool fraction) including the end point. */
  curve: number[];
  t0Table: T0Table | null;
  partMinC: number | null;
}

export function bathProgress(state: BathState): BathProgress {
  const model = batchModel(state.setup);
  const kin = kinFrom(state);
  const s: BathState = { ...state, kin: { ...state.kin }, curve: state.curve.slice() };
  const ctx: CellContext = { model, state: s, kin };
  const pts = state.cell.points;
  const endS = state.last ? state.last.tS : 0;
  if (pts.length >= 4) processCell(ctx, pts.slice(), endS, true);
  return { model, endS, sum: kin.sum, v: kin.v, time95S: kin.time95S, curve: s.curve, t0Table: s.t0Table, partMinC: s.partMinC };
}
