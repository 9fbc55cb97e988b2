import type { Prisma, PrismaClient } from '../generated/prisma/client.js';

/**
 * What a batch recompute reads: the batch, its spec version, its load events and the temperature history
 * of its line inside the batch's time window. Plain data (epoch ms), so libs/compliance can evaluate it.
 */

export type RecomputeChannelRole = 'furnace-zone' | 'bath-tc';

export interface RecomputeChannel {
  channelId: string;
  code: string;
  role: RecomputeChannelRole;
  samples: { tMs: number; valueC: number }[];
}

export interface RecomputeInputs {
  batch: { id: string; code: string; lineId: string; heatId: string; specVersionId: string; productSpecId: string; lineTimeZone: string };
  /** The spec version's JSON as stored; the caller validates it with the libs/contracts schemas. */
  spec: { processWindow: unknown; acceptanceCriteria: unknown; chemistryLimits: unknown };
  events: { chargedMs?: number; outOfFurnaceMs?: number; intoBathMs?: number; outOfBathMs?: number };
  channels: RecomputeChannel[];
}

type Db = PrismaClient | Prisma.TransactionClient;

const EVENT_FIELD = {
  CHARGED: 'chargedMs',
  OUT_OF_FURNACE: 'outOfFurnaceMs',
  INTO_BATH: 'intoBathMs',
  OUT_OF_BATH: 'outOfBathMs',
} as const;

export class RecomputeInputsRepository {
  constructor(private readonly prisma: PrismaClient) {}

  /**
   * Loads everything for one batch, or null when the batch does not exist.
   *
   * Channels: temperature channels (quantity TEMPERATURE_C) of the batch's line with role FURNACE_ZONE
   * (furnace zones) or BATH_TC (bath thermocouples); load thermocouples and other signals are not part of
   * the process-window rules yet. Samples: furnace zones from CHARGED, bath thermocouples from INTO_BATH,
   * each from `leadMs` earlier (the reading just before a step still counts), up to the step's end or,
   * while it runs, everything received so far.
   */
  async load(batchId: string, options: { leadMs: number }, db: Db = this.prisma): Promise<RecomputeInputs | null> {
    const batch = await db.batch.findUnique({
      where: { id: batchId },
      include: { specVersion: true, loadEvents: true, line: { select: { timeZone: true } } },
    });
    if (!batch) return null;

    const events: RecomputeInputs['events'] = {};
    for (const e of batch.loadEvents) events[EVENT_FIELD[e.kind]] = e.at.getTime();

    const channels = await db.channel.findMany({
      where: { quantity: 'TEMPERATURE_C', role: { in: ['FURNACE_ZONE', 'BATH_TC'] }, equipment: { lineId: batch.lineId } },
      orderBy: { code: 'asc' },
    });
    const windows = {
      'furnace-zone': events.chargedMs === undefined ? null : { fromMs: events.chargedMs - options.leadMs, toMs: events.outOfFurnaceMs },
      'bath-tc': events.intoBathMs === undefined ? null : { fromMs: events.intoBathMs - options.leadMs, toMs: events.outOfBathMs },
    } as const;

    const out: RecomputeChannel[] = [];
    for (const c of channels) {
      const role: RecomputeChannelRole = c.role === 'FURNACE_ZONE' ? 'furnace-zone' : 'bath-tc';
      const w = windows[role];
      const samples = w ? await loadSamples(db, c.id, w.fromMs, w.toMs) : [];
      out.push({ channelId: c.id, code: c.code, role, samples });
    }

    return {
      batch: {
        id: batch.id,
        code: batch.code,
        lineId: batch.lineId,
        heatId: batch.heatId,
        specVersionId: batch.specVersionId,
        productSpecId: batch.specVersion.specId,
        lineTimeZone: batch.line.timeZone,
      },
      spec: {
        processWindow: batch.specVersion.processWindow,
        acceptanceCriteria: batch.specVersion.acceptanceCriteria,
        chemistryLimits: batch.specVersion.chemistryLimits,
      },
      events,
      channels: out,
    };
  }

  /** Batches flagged stale (their recompute could not be enqueued), oldest first. */
  async staleBatchIds(limit: number, db: Db = this.prisma): Promise<string[]> {
    const rows = await db.batch.findMany({
      where: { stale: true },
      orderBy: [{ staleSince: 'asc' }, { id: 'asc' }],
      select: { id: true },
      take: limit,
    });
    return rows.map((r) => r.id);
  }

  /**
   * Batches whose load is still being treated: charged within `withinMs` of the database clock and not
   * yet out of the bath. Time alone can break their rules (a hold running past its maximum, a controller
   * gone silent), so the reconciler re-evaluates them even when no data arrives.
   */
  async inProgressBatchIds(withinMs: number, limit: number, db: Db = this.prisma): Promise<string[]> {
    const rows = await db.$queryRaw<{ id: string }[]>`
      SELECT c."batchId" AS id
      FROM "LoadEvent" c
      WHERE c."kind" = 'CHARGED'
        AND c."at" >= now() - make_interval(secs => ${withinMs / 1000})
        AND NOT EXISTS (SELECT 1 FROM "LoadEvent" o WHERE o."batchId" = c."batchId" AND o."kind" = 'OUT_OF_BATH')
      ORDER BY c."at" ASC
      LIMIT ${limit}`;
    return rows.map((r) => r.id);
  }

  /**
   * Clears the stale flag of a batch whose recompute started at `startedAt` (database clock), but only if
   * the flag was set no later than that: a flag set after the recompute began may cover data the
   * recompute did not see, so it stays for the next round. Returns whether the flag was cleared.
   */
  async clearStaleIfCovered(batchId: string, startedAt: Date, db: Db = this.prisma): Promise<boolean> {
    const n = await db.$executeRaw`
      UPDATE "Batch" SET "stale" = false, "staleSince" = NULL, "updatedAt" = now()
      WHERE "id" = ${batchId}::uuid AND "stale" AND ("staleSince" IS NULL OR "staleSince" <= ${startedAt})`;
    return n > 0;
  }
}

async function loadSamples(db: Db, channelId: string, fromMs: number, toMs: number | undefined) {
  const from = new Date(fromMs);
  // Epoch ms straight from Postgres: no Date object per row on the way.
  const rows =
    toMs === undefined
      ? await db.$queryRaw<{ tMs: number; valueC: number }[]>`
          SELECT (extract(epoch FROM "t") * 1000)::float8 AS "tMs", "value" AS "valueC"
          FROM "Sample" WHERE "channelId" = ${channelId}::uuid AND "t" >= ${from} ORDER BY "t"`
      : await db.$queryRaw<{ tMs: number; valueC: number }[]>`
          SELECT (extract(epoch FROM "t") * 1000)::float8 AS "tMs", "value" AS "valueC"
          FROM "Sample" WHERE "channelId" = ${channelId}::uuid AND "t" >= ${from} AND "t" <= ${new Date(toMs)} ORDER BY "t"`;
  return rows.map((r) => ({ tMs: Math.round(Number(r.tMs)), valueC: Number(r.valueC) }));
}
