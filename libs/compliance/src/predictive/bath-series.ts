import type { TemperatureChannelSeries, TemperatureSample } from '../process-window/types.js';

/**
 * The bath temperature a batch saw, as one series for the kinetics: the mean of the bath thermocouples that agree,
 * on a fixed grid from the load entering the bath (tS = 0 at INTO_BATH).
 *
 * Per thermocouple, the value at a grid time is interpolated linearly between its two neighbouring readings when
 * they are at most `maxGapS` apart (a longer hole is unknown, practice.md §5.3; the reading nearest an end holds for
 * up to `maxGapS`). Readings outside the plausible band are not temperatures and are dropped. At each grid time the
 * known values are combined: one value is used as it is; with several, those within `maxDiffC` of their median agree
 * and their mean is used; when two disagree with nothing to break the tie, both are averaged and the time is
 * reported (`disagreementS`). An optional correction (calibration certificate, pyrometry) is applied per reading.
 *
 * Settled horizon: a grid point is final once every live thermocouple has a reading at or after it (later uploads
 * cannot change it, unless a controller back-fills older data, which the caller detects by digest). Points after
 * the horizon are provisional.
 */

export const BATH_GRID_S = 10;

export interface BathSeriesOptions {
  intoBathMs: number;
  /** OUT_OF_BATH when known: the series ends there (readings up to the allowed gap after it still interpolate). */
  outOfBathMs?: number;
  /** No reading at or after this time belongs to the load (e.g. the next load's INTO_BATH). */
  hardEndMs?: number;
  maxGapS: number;
  maxDiffC: number;
  plausible: { minTempC: number; maxTempC: number };
  /** Per-reading correction, e.g. a thermocouple's calibration correction (null = none). */
  correct?: ((channelId: string, tMs: number, valueC: number) => number) | null;
  gridS?: number;
}

export interface BathChannelUse {
  channelId: string;
  code: string;
  samples: number;
  used: boolean;
}

export interface BathSeries {
  /** [tS, tempC] on the grid, tS from INTO_BATH; gaps where no thermocouple was known are left out. */
  points: Array<[number, number]>;
  /** Number of leading points that are final (settled). */
  settledCount: number;
  /** s from INTO_BATH of the last reading of any bath thermocouple (clipped to OUT_OF_BATH). */
  lastReadingS: number | null;
  channels: BathChannelUse[];
  /** Grid seconds during which two thermocouples disagreed and were averaged anyway. */
  disagreementS: number;
  /** Longest stretch with no known bath temperature inside the series, s. */
  longestGapS: number;
}

interface Prepared {
  channelId: string;
  code: string;
  t: Float64Array; // s from INTO_BATH
  v: Float64Array;
}

export function mergeBathChannels(channels: readonly TemperatureChannelSeries[], opts: BathSeriesOptions): BathSeries {
  const gridS = opts.gridS ?? BATH_GRID_S;
  const hardEnd = opts.hardEndMs;
  const endMs = opts.outOfBathMs ?? (hardEnd !== undefined ? hardEnd - 1 : undefined);
  const prepared: Prepared[] = [];
  const uses: BathChannelUse[] = [];
  for (const c of channels) {
    if (c.role !== 'bath-tc') continue;
    const rows = dedupeSorted(c.samples)
      .filter((s) => s.valueC >= opts.plausible.minTempC && s.valueC <= opts.plausible.maxTempC)
      .filter((s) => endMs === undefined || s.tMs <= endMs + opts.maxGapS * 1000)
      .filter((s) => hardEnd === undefined || s.tMs < hardEnd)
      .map((s) => ({ tS: (s.tMs - opts.intoBathMs) / 1000, valueC: opts.correct ? opts.correct(c.channelId, s.tMs, s.valueC) : s.valueC }));
    const p: Prepared = { channelId: c.channelId, code: c.code, t: Float64Array.from(rows, (r) => r.tS), v: Float64Array.from(rows, (r) => r.valueC) };
    prepared.push(p);
    uses.push({ channelId: c.channelId, code: c.code, samples: rows.filter((r) => r.tS >= 0).length, used: false });
  }

  const endLimitS = endMs === undefined ? Infinity : (endMs - opts.intoBathMs) / 1000;
  let lastReadingS: number | null = null;
  for (const p of prepared) {
    if (p.t.length === 0) continue;
    const last = Math.min(p.t[p.t.length - 1], endLimitS);
    if (last >= 0 && (lastReadingS === null || last > lastReadingS)) lastReadingS = last;
  }
  if (lastReadingS === null) return { points: [], settledCount: 0, lastReadingS: null, channels: uses, disagreementS: 0, longestGapS: 0 };

  // Live thermocouples: their last reading is within the allowed gap of the newest one.
  let settledUntilS = lastReadingS;
  for (const p of prepared) {
    if (p.t.length === 0) continue;
    const last = p.t[p.t.length - 1];
    if (last >= lastReadingS - opts.maxGapS && last < settledUntilS) settledUntilS = last;
  }
  if (endMs !== undefined) {
    // Out of the bath: readings up to OUT_OF_BATH (+ the allowed gap) are all there is to wait for.
    const closedAtS = endLimitS;
    if (settledUntilS >= closedAtS) settledUntilS = closedAtS;
  }

  const points: Array<[number, number]> = [];
  let settledCount = 0;
  let disagreementS = 0;
  let longestGapS = 0;
  let lastKnownS = 0;
  const cursor = new Int32Array(prepared.length);
  const values: number[] = [];
  const usedIdx = new Set<number>();
  const lastGrid = Math.floor(Math.min(lastReadingS, endLimitS) / gridS + 1e-9);
  for (let k = 0; k <= lastGrid; k++) {
    const tS = k * gridS;
    values.length = 0;
    const from: number[] = [];
    for (let ci = 0; ci < prepared.length; ci++) {
      const v = valueAt(prepared[ci], tS, opts.maxGapS, cursor, ci);
      if (v !== null) {
        values.push(v);
        from.push(ci);
      }
    }
    if (values.length === 0) {
      longestGapS = Math.max(longestGapS, tS - lastKnownS);
      continue;
    }
    if (points.length) longestGapS = Math.max(longestGapS, tS - lastKnownS - gridS);
    lastKnownS = tS;
    const { meanC, used, disagreed } = agree(values, opts.maxDiffC);
    if (disagreed) disagreementS += gridS;
    for (const i of used) usedIdx.add(from[i]);
    points.push([tS, meanC]);
    if (tS <= settledUntilS) settledCount = points.length;
  }
  usedIdx.forEach((i) => (uses[i].used = true));
  return { points, settledCount, lastReadingS, channels: uses, disagreementS, longestGapS };
}

function dedupeSorted(samples: readonly TemperatureSample[]): TemperatureSample[] {
  const sorted = [...samples].sort((a, b) => a.tMs - b.tMs);
  const out: TemperatureSample[] = [];
  for (const s of sorted) {
    if (!Number.isFinite(s.valueC) || !Number.isFinite(s.tMs)) continue;
    if (out.length && out[out.length - 1].tMs === s.tMs) out[out.length - 1] = s;
    else out.push(s);
  }
  return out;
}

/** Value of one thermocouple at tS (see the module comment); `cursor` remembers the search position per channel. */
function valueAt(p: Prepared, tS: number, maxGapS: number, cursor: Int32Array, ci: number): number | null {
  const n = p.t.length;
  if (n === 0) return null;
  let j = cursor[ci];
  while (j < n && p.t[j] < tS) j++;
  cursor[ci] = j;
  // p.t[j] is the first reading at or after tS; p.t[j-1] the last before it.
  if (j < n && p.t[j] === tS) return p.v[j];
  const hasAfter = j < n;
  const hasBefore = j > 0;
  if (hasAfter && hasBefore) {
    const t0 = p.t[j - 1];
    const t1 = p.t[j];
    if (t1 - t0 > maxGapS) {
      // A hole: the nearer reading still holds within the allowed gap.
      if (tS - t0 <= maxGapS) return p.v[j - 1];
      if (t1 - tS <= maxGapS) return p.v[j];
      return null;
    }
    return p.v[j - 1] + ((tS - t0) / (t1 - t0)) * (p.v[j] - p.v[j - 1]);
  }
  if (hasBefore) return tS - p.t[j - 1] <= maxGapS ? p.v[j - 1] : null;
  return p.t[j] - tS <= maxGapS ? p.v[j] : null;
}

/** Mean of the values that agree (within maxDiffC of their median); two that disagree are both kept and flagged. */
export function agree(values: readonly number[], maxDiffC: number): { meanC: number; used: number[]; disagreed: boolean } {
  if (values.length === 1) return { meanC: values[0], used: [0], disagreed: false };
  if (values.length === 2) {
    return { meanC: (values[0] + values[1]) / 2, used: [0, 1], disagreed: Math.abs(values[0] - values[1]) > maxDiffC };
  }
  const sorted = [...values].sort((a, b) => a - b);
  const mid = sorted.length >> 1;
  const median = sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
  const used: number[] = [];
  let sum = 0;
  values.forEach((v, i) => {
    if (Math.abs(v - median) <= maxDiffC) {
      used.push(i);
      sum += v;
    }
  });
  if (used.length === 0) return { meanC: median, used: values.map((_, i) => i), disagreed: true };
  return { meanC: sum / used.length, used, disagreed: used.length < values.length };
}
