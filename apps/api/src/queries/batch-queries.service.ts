import { Injectable } from '@nestjs/common';
import type { BatchQuery, Page } from '@ausline/contracts';
import type { Batch, Deviation, LabResult, LoadEvent, Prediction, Prisma, PrismaClient } from '@ausline/db';
import { notFound } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';
import { decodeCursor, encodeCursor } from './cursor.js';

export interface BatchListItem extends Batch {
  line: { code: string };
  heat: { heatNumber: string };
  specVersion: { version: number; spec: { id: string; code: string } };
}

export interface ChannelSummary {
  channelId: string;
  channelCode: string;
  equipmentId: string;
  equipmentCode: string;
  equipmentKind: string;
  quantity: string;
  role: string;
  count: number;
  min: number | null;
  max: number | null;
  first: { t: string; value: number } | null;
  last: { t: string; value: number } | null;
}

export interface BatchDetail extends Batch {
  line: { id: string; code: string; name: string; timeZone: string };
  heat: { id: string; heatNumber: string; material: string; grade: string | null; revision: number; chemistryWtPct: unknown };
  spec: { id: string; code: string; name: string; versionId: string; version: number; status: string };
  events: Array<LoadEvent & { equipmentCode: string }>;
  /** The span the samples summary covers: CHARGED to OUT_OF_BATH (or now while in progress); null before CHARGED. */
  samplesWindow: { from: string; to: string; open: boolean } | null;
  samplesSummary: ChannelSummary[];
  deviations: Deviation[];
  labResults: LabResult[];
  /** The newest prediction without its engine state (which can be 100 KiB+); null until the worker computed one. */
  latestPrediction: Omit<Prediction, 'state'> | null;
}

/** Read side of batches: the list with filters and paging, and one batch with everything about it. */
@Injectable()
export class BatchQueriesService {
  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}

  async list(query: BatchQuery): Promise<Page<BatchListItem>> {
    const where: Prisma.BatchWhereInput = {
      ...(query.lineId ? { lineId: query.lineId } : {}),
      ...(query.heatId ? { heatId: query.heatId } : {}),
      ...(query.productSpecId ? { specVersion: { specId: query.productSpecId } } : {}),
      ...(query.status ? { status: { in: query.status } } : {}),
      ...(query.code ? { code: query.code } : {}),
      ...(query.stale !== undefined ? { stale: query.stale } : {}),
      ...(query.from || query.to
        ? { createdAt: { ...(query.from ? { gte: new Date(query.from) } : {}), ...(query.to ? { lt: new Date(query.to) } : {}) } }
        : {}),
    };
    const after = query.cursor ? decodeCursor(query.cursor) : undefined;
    const pageWhere: Prisma.BatchWhereInput = after
      ? { AND: [where, { OR: [{ createdAt: { lt: after.at } }, { createdAt: after.at, id: { lt: after.id } }] }] }
      : where;
    const [total, rows] = await Promise.all([
      this.prisma.batch.count({ where }),
      this.prisma.batch.findMany({
        where: pageWhere,
        orderBy: [{ createdAt: 'desc' }, { id: 'desc' }],
        take: query.limit + 1,
        include: {
          line: { select: { code: true } },
          heat: { select: { heatNumber: true } },
          specVersion: { select: { version: true, spec: { select: { id: true, code: true } } } },
        },
      }),
    ]);
    const items = rows.slice(0, query.limit);
    const last = items[items.length - 1];
    return { items, total, nextCursor: rows.length > query.limit && last ? encodeCursor(last.createdAt, last.id) : null };
  }

  async detail(id: string): Promise<BatchDetail> {
    const batch = await this.prisma.batch.findUnique({
      where: { id },
      include: {
        line: { select: { id: true, code: true, name: true, timeZone: true } },
        heat: { select: { id: true, heatNumber: true, material: true, grade: true, revision: true, chemistryWtPct: true } },
        specVersion: { select: { id: true, version: true, status: true, spec: { select: { id: true, code: true, name: true } } } },
        loadEvents: { include: { equipment: { select: { code: true } } } },
        deviations: { orderBy: [{ openedAt: 'desc' }, { id: 'desc' }] },
        labResults: { orderBy: [{ postedAt: 'asc' }, { id: 'asc' }] },
        predictions: { orderBy: { version: 'desc' }, take: 1, omit: { state: true } },
      },
    });
    if (!batch) throw notFound(`Batch ${id} does not exist`);
    const { line, heat, specVersion, loadEvents, deviations, labResults, predictions, ...row } = batch;

    const order = ['CHARGED', 'OUT_OF_FURNACE', 'INTO_BATH', 'OUT_OF_BATH'];
    const events = loadEvents
      .sort((a, b) => order.indexOf(a.kind) - order.indexOf(b.kind))
      .map(({ equipment, ...event }) => ({ ...event, equipmentCode: equipment.code }));
    const charged = events.find((e) => e.kind === 'CHARGED');
    const done = events.find((e) => e.kind === 'OUT_OF_BATH');
    const samplesWindow = charged
      ? { from: charged.at.toISOString(), to: (done?.at ?? new Date()).toISOString(), open: done === undefined }
      : null;

    return {
      ...row,
      line,
      heat,
      spec: { id: specVersion.spec.id, code: specVersion.spec.code, name: specVersion.spec.name, versionId: specVersion.id, version: specVersion.version, status: specVersion.status },
      events,
      samplesWindow,
      samplesSummary: await this.samplesSummary(line.id, samplesWindow),
      deviations,
      labResults,
      latestPrediction: predictions[0] ?? null,
    };
  }

  /**
   * Per channel of the line's equipment: count, min, max, first and last sample inside the window.
   * One aggregate per channel over the (channelId, t) primary key, then two point lookups for the
   * first and last values.
   */
  private async samplesSummary(lineId: string, window: { from: string; to: string } | null): Promise<ChannelSummary[]> {
    const from = window ? new Date(window.from) : new Date(0);
    const to = window ? new Date(window.to) : new Date(0);
    const rows = await this.prisma.$queryRaw<
      Array<{
        channelId: string;
        channelCode: string;
        equipmentId: string;
        equipmentCode: string;
        equipmentKind: string;
        quantity: string;
        role: string;
        count: number;
        min: number | null;
        max: number | null;
        firstT: Date | null;
        firstValue: number | null;
        lastT: Date | null;
        lastValue: number | null;
      }>
    >`
      SELECT c."id" AS "channelId", c."code" AS "channelCode", e."id" AS "equipmentId", e."code" AS "equipmentCode",
             e."kind"::text AS "equipmentKind", c."quantity"::text AS "quantity", c."role"::text AS "role",
             agg."count", agg."min", agg."max",
             agg."firstT", f."value" AS "firstValue", agg."lastT", l."value" AS "lastValue"
      FROM "Channel" c
      JOIN "Equipment" e ON e."id" = c."equipmentId"
      CROSS JOIN LATERAL (
        SELECT count(*)::int AS "count", min(s."value") AS "min", max(s."value") AS "max",
               min(s."t") AS "firstT", max(s."t") AS "lastT"
        FROM "Sample" s
        WHERE s."channelId" = c."id" AND s."t" >= ${from} AND s."t" <= ${to} AND ${window !== null}
      ) agg
      LEFT JOIN "Sample" f ON f."channelId" = c."id" AND f."t" = agg."firstT"
      LEFT JOIN "Sample" l ON l."channelId" = c."id" AND l."t" = agg."lastT"
      WHERE e."lineId" = ${lineId}::uuid
      ORDER BY e."kind", e."code", c."code"`;
    return rows.map((r) => ({
      channelId: r.channelId,
      channelCode: r.channelCode,
      equipmentId: r.equipmentId,
      equipmentCode: r.equipmentCode,
      equipmentKind: r.equipmentKind,
      quantity: r.quantity,
      role: r.role,
      count: r.count,
      min: r.min,
      max: r.max,
      first: r.firstT && r.firstValue !== null ? { t: new Date(r.firstT).toISOString(), value: r.firstValue } : null,
      last: r.lastT && r.lastValue !== null ? { t: new Date(r.lastT).toISOString(), value: r.lastValue } : null,
    }));
  }
}
