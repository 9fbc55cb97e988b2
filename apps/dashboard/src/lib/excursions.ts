/**
 * Stretches of a temperature record outside a band, for shading on the chart. This is a picture of
 * the data, not the rule: whether an excursion breaks the spec (longer than maxExcursionS, counted the
 * way libs/compliance counts it) is the worker's deviation, which the batch view lists beside the chart.
 */

export interface Excursion {
  fromMs: number;
  toMs: number;
  side: 'above' | 'below';
  /** Highest (above) or lowest (below) value in the stretch, °C. */
  extremeC: number;
}

/**
 * Runs of consecutive samples outside [minC, maxC]. A run starts at its first sample outside and ends
 * at the first sample back inside (or at its last sample when the record stops or a gap longer than
 * gapMs interrupts it). Samples must be sorted by time.
 */
export function findExcursions(
  ts: ArrayLike<number>,
  values: ArrayLike<number>,
  minC: number,
  maxC: number,
  gapMs = Number.POSITIVE_INFINITY,
): Excursion[] {
  const n = Math.min(ts.length, values.length);
  const out: Excursion[] = [];
  let current: Excursion | null = null;
  let lastT = Number.NaN;
  for (let i = 0; i < n; i++) {
    const t = ts[i]!;
    const v = values[i]!;
    if (current && t - lastT > gapMs) {
      current.toMs = lastT;
      out.push(current);
      current = null;
    }
    const side = v > maxC ? 'above' : v < minC ? 'below' : null;
    if (current && side !== current.side) {
      current.toMs = t;
      out.push(current);
      current = null;
    }
    if (side && !current) current = { fromMs: t, toMs: t, side, extremeC: v };
    if (current) current.extremeC = current.side === 'above' ? Math.max(current.extremeC, v) : Math.min(current.extremeC, v);
    lastT = t;
  }
  if (current) {
    current.toMs = lastT;
    out.push(current);
  }
  return out;
}
