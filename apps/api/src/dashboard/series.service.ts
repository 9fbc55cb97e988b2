import { Injectable } from '@nestjs/common';
import type { PrismaClient } from '@ausline/db';
import { badRequest, notFound } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';

export interface SeriesQueryInput {
  channelIds?: string[];
  from?: string;
  to?: string;
  maxPoints: number;
}

export interface ChannelSeries {
  channelId: string;
  channelCode: string;
  equipmentId: string;
  equipmentCode: string;
  equipmentKind: string;
  quantity: string;
  role: string;
  /** Samples stored in the window. */
  count: number;
  /** True when points are min/max per bucket rather than every sample. */
  decimated: boolean;
  /** Bucket width in ms when decimated, else null. */
  bucketMs: number | null;
  /** [epoch ms, value] in time order. */
  points: Array<[number, number]>;
}

export interface BatchSeries {
  batchId: string;
  /** The span covered: CHARGED to OUT_OF_BATH (or now while in progress), unless from/to were given; null before CHARGED. */
  window: { from: string; to: string; open: boolean } | null;
  channels: ChannelSeries[];
}

/**
 * The sample series of a batch for charts: every channel of the batch's line, over the batch's window.
 * A channel with more samples than maxPoints is thinned in SQL to the minimum and the maximum of each
 * time bucket (maxPoints / 2 buckets), each with its own time stamp, so no excursion disappears and a
 * day of 1 Hz data travels as a few thousand points instead of 86,400.
 */
@Injectable()
export class SeriesService {
  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}

  async batchSeries(batchId: string, query: SeriesQueryInput): Promise<BatchSeries> {
    const batch = await this.prisma.batch.findUnique({
      where: { id: batchId },
      select: { id: true, lineId: true, loadEvents: { select: { kind: true, at: true } } },
    });
    if (!batch) throw notFound(`Batch ${batchId} does not exist`);
    const charged = batch.loadEvents.find((e) => e.kind === 'CHARGED');
    const done = batch.loadEvents.find((e) => e.kind === 'OUT_OF_BATH');
    const fromMs = query.from ? Date.parse(query.from) : charged?.at.getTime();
    const toMs = query.to ? Date.parse(query.to) : (done?.at ?? new Date()).getTime();
    if (fromMs !== undefined && fromMs >= toMs) throw badRequest("'to' must be after 'from'", [{ path: 'query.to', message: "must be after 'from'" }]);

    const channels = await this.prisma.channel.findMany({
      where: { equipment: { lineId: batch.lineId }, ...(query.channelIds ? { id: { in: query.channelIds } } : {}) },
      include: { equipment: { select: { id: true, code: true, kind: true } } },
      orderBy: [{ equipment: { kind: 'asc' } }, { equipment: { code: 'asc' } }, { code: 'asc' }],
    });
    if (query.channelIds) {
      const found = new Set(channels.map((c) => c.id));
      const missing = query.channelIds.filter((id) => !found.has(id));
      if (missing.length > 0) {
        throw badRequest(`Channel ${missing[0]} is not a channel of this batch's line`, missing.map((id) => ({ path: 'query.channelIds', message: `${id} is not on this line` })));
      }
    }

    const window =
      fromMs === undefined ? null : { from: new Date(fromMs).toISOString(), to: new Date(toMs).toISOString(), open: !query.to && done === undefined };
    // Channels are read in parallel (each is one index range scan of the Sample primary key).
    const series = await Promise.all(channels.map(async (c): Promise<ChannelSeries> => {
      const base = {
        channelId: c.id,
        channelCode: c.code,
        equipmentId: c.equipment.id,
        equipmentCode: c.equipment.code,
        equipmentKind: c.equipment.kind,
        quantity: c.quantity,
        role: c.role,
      };
      if (!window) return { ...base, count: 0, decimated: false, bucketMs: null, points: [] };
      return { ...base, ...(await this.points(c.id, new Date(fromMs!), new Date(toMs), query.maxPoints)) };
    }));
    return { batchId, window, channels: series };
  }

  private async points(
    channelId: string,
    from: Date,
    to: Date,
    maxPoints: number,
  ): Promise<Pick<ChannelSeries, 'count' | 'decimated' | 'bucketMs' | 'points'>> {
    const buckets = Math.max(1, Math.floor(maxPoints / 2));
    const bucketMs = Math.max(1, Math.ceil((to.getTime() - from.getTime() + 1) / buckets));
    // One pass: per time bucket the sample count, the lowest value with its earliest time and the highest
    // value with its earliest time (min/max of [value, ±ms] arrays), as a hash aggregate without sorting.
    // date_part gives float8 epoch seconds (extract would compute in numeric, several times slower).
    const rows = await this.prisma.$queryRaw<Array<{ n: number; lo: number[]; hi: number[] }>>`
      SELECT count(*)::int AS "n",
             min(ARRAY["value", date_part('epoch', "t") * 1000]) AS "lo",
             max(ARRAY["value", -date_part('epoch', "t") * 1000]) AS "hi"
      FROM "Sample"
      WHERE "channelId" = ${channelId}::uuid AND "t" >= ${from} AND "t" <= ${to}
      GROUP BY floor((date_part('epoch', "t") * 1000 - ${from.getTime()}::float8) / ${bucketMs}::float8)`;
    const count = rows.reduce((sum, r) => sum + r.n, 0);
    if (count <= maxPoints) {
      if (count === 0) return { count, decimated: false, bucketMs: null, points: [] };
      // Two arrays in one row: far cheaper through the driver than one row object per sample.
      const [raw] = await this.prisma.$queryRaw<[{ ts: number[] | null; vs: number[] | null }]>`
        SELECT array_agg(date_part('epoch', "t") * 1000 ORDER BY "t") AS "ts", array_agg("value" ORDER BY "t") AS "vs"
        FROM "Sample" WHERE "channelId" = ${channelId}::uuid AND "t" >= ${from} AND "t" <= ${to}`;
      const ts = raw?.ts ?? [];
      const vs = raw?.vs ?? [];
      return { count, decimated: false, bucketMs: null, points: ts.map((t, i) => [Math.round(t), vs[i]!]) };
    }
    const points: Array<[number, number]> = [];
    for (const r of rows) {
      const a: [number, number] = [Math.round(r.lo[1]!), r.lo[0]!];
      const b: [number, number] = [Math.round(-r.hi[1]!), r.hi[0]!];
      if (a[0] === b[0]) points.push(a);
      else if (a[0] < b[0]) points.push(a, b);
      else points.push(b, a);
    }
    // Hash aggregation returns buckets in no particular order: put the points in time order.
    points.sort((p, q) => p[0] - q[0]);
    return { count, decimated: true, bucketMs, points };
  }
}
