/**
 * Series thinning for charts. A day of 1 Hz bath data is 86,400 points per thermocouple; a chart is
 * about 1,000 pixels wide, so at most a few points per pixel column can ever be seen. Min/max per
 * bucket keeps what matters on a temperature record: every spike and every dip survives (an excursion
 * one second long still reaches its extreme value), only points that would be drawn on top of each
 * other are dropped.
 *
 * Gaps are kept as gaps: when two consecutive samples are further apart than `gapMs`, a point with
 * y = null is put between them, and the chart (spanGaps: false) breaks the line there instead of
 * drawing a straight, invented segment across missing data.
 */

export interface XY {
  x: number;
  y: number | null;
}

export interface DecimateOptions {
  /** Number of buckets across [xMin, xMax]; use the plot width in pixels (or twice it). */
  buckets: number;
  /** Consecutive samples further apart than this are not joined (null point between them). */
  gapMs?: number;
  /** Visible range; defaults to the first and last x. */
  xMin?: number;
  xMax?: number;
}

/**
 * Min/max decimation of a series sorted by x. Returns at most 2 points per bucket (plus gap markers),
 * in x order; a series that already fits (<= 2 points per bucket) is returned as is (with gap markers).
 * Points outside [xMin, xMax] are dropped, except the nearest one on each side, so the line runs to the
 * edge of the plot.
 */
export function decimateMinMax(xs: ArrayLike<number>, ys: ArrayLike<number>, options: DecimateOptions): XY[] {
  const n = Math.min(xs.length, ys.length);
  if (n === 0) return [];
  const buckets = Math.max(1, Math.floor(options.buckets));
  const gapMs = options.gapMs ?? Number.POSITIVE_INFINITY;
  const xMin = options.xMin ?? xs[0]!;
  const xMax = options.xMax ?? xs[n - 1]!;

  // Index range to look at: the visible points plus one neighbour on each side.
  let start = lowerBound(xs, n, xMin);
  let end = upperBound(xs, n, xMax); // exclusive
  if (start > 0) start -= 1;
  if (end < n) end += 1;
  const count = end - start;
  const out: XY[] = [];

  if (count <= buckets * 2 || xMax <= xMin) {
    for (let i = start; i < end; i++) {
      if (i > start && xs[i]! - xs[i - 1]! > gapMs) out.push({ x: (xs[i]! + xs[i - 1]!) / 2, y: null });
      out.push({ x: xs[i]!, y: ys[i]! });
    }
    return out;
  }

  const width = (xMax - xMin) / buckets;
  let i = start;
  let prevX = Number.NaN;
  while (i < end) {
    const bucket = Math.min(buckets - 1, Math.max(0, Math.floor((xs[i]! - xMin) / width)));
    // Points left of xMin fall into bucket 0 and right of xMax into the last: the neighbours.
    const bucketEnd = bucket === buckets - 1 ? Number.POSITIVE_INFINITY : xMin + (bucket + 1) * width;
    let minI = i;
    let maxI = i;
    let j = i;
    // A gap inside a bucket closes the bucket early so the break is drawn where it is.
    while (j < end && xs[j]! < bucketEnd) {
      if (j > i && xs[j]! - xs[j - 1]! > gapMs) break;
      if (ys[j]! < ys[minI]!) minI = j;
      if (ys[j]! > ys[maxI]!) maxI = j;
      j++;
    }
    if (!Number.isNaN(prevX) && xs[i]! - prevX > gapMs) out.push({ x: (xs[i]! + prevX) / 2, y: null });
    if (minI === maxI) {
      out.push({ x: xs[minI]!, y: ys[minI]! });
    } else if (minI < maxI) {
      out.push({ x: xs[minI]!, y: ys[minI]! }, { x: xs[maxI]!, y: ys[maxI]! });
    } else {
      out.push({ x: xs[maxI]!, y: ys[maxI]! }, { x: xs[minI]!, y: ys[minI]! });
    }
    prevX = xs[j - 1]!;
    i = j;
  }
  return out;
}

/** First index with xs[i] >= x (n when none). */
function lowerBound(xs: ArrayLike<number>, n: number, x: number): number {
  let lo = 0;
  let hi = n;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (xs[mid]! < x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** First index with xs[i] > x (n when none). */
function upperBound(xs: ArrayLike<number>, n: number, x: number): number {
  let lo = 0;
  let hi = n;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (xs[mid]! <= x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** Splits [[x, y], ...] into two typed arrays (what decimateMinMax reads fastest). */
export function toColumns(points: ReadonlyArray<readonly [number, number]>): { xs: Float64Array; ys: Float64Array } {
  const xs = new Float64Array(points.length);
  const ys = new Float64Array(points.length);
  for (let i = 0; i < points.length; i++) {
    xs[i] = points[i]![0];
    ys[i] = points[i]![1];
  }
  return { xs, ys };
}
