import { Inject, Injectable } from '@nestjs/common';
import { deviceTimeMs, type SamplesPost, type SamplesReply } from '@ausline/contracts';
import type { PrismaClient } from '@ausline/db';
import { API_CONFIG, type ApiConfig } from '../app-config.js';
import { notFound, unprocessable, type ErrorIssue } from '../http/errors.js';
import { ingestSamplesTotal } from '../ops/metrics.js';
import { InjectPrisma } from '../prisma.provider.js';
import { batchesCoveringSpan } from './batch-window.js';
import { futureTimeIssue } from './device-time.js';
import { ingestSettingsFrom } from './ingest-settings.js';
import { RecomputeQueue } from './recompute-queue.js';

/** Problems listed per refused request; the message says how many there were in all. */
const MAX_ISSUES = 100;

/**
 * Stores a controller's samples for one piece of equipment.
 *
 * All-or-nothing: the request is checked whole first (channels known on this equipment, no time too
 * far ahead, no two samples of one channel and time with different values); then every row goes in
 * with ONE set-based statement (INSERT ... SELECT FROM unnest(...) ON CONFLICT DO NOTHING), so a
 * retry or an overlapping re-send stores nothing twice and a failure stores nothing at all. Samples
 * may arrive in any order (store-and-forward backfill, practice.md §5.3).
 */
@Injectable()
export class SamplesService {
  private readonly maxFutureMs: number;

  constructor(
    @InjectPrisma() private readonly prisma: PrismaClient,
    @Inject(API_CONFIG) config: ApiConfig,
    private readonly recompute: RecomputeQueue,
  ) {
    this.maxFutureMs = ingestSettingsFrom(config).maxFutureMs;
  }

  async ingest(equipmentId: string, input: SamplesPost): Promise<SamplesReply> {
    const equipment = await this.prisma.equipment.findUnique({
      where: { id: equipmentId },
      select: { id: true, code: true, lineId: true, channels: { select: { id: true, code: true } } },
    });
    if (!equipment) throw notFound(`Equipment ${equipmentId} does not exist`);

    const channelByCode = new Map(equipment.channels.map((c) => [c.code, c.id]));
    const nowMs = Date.now();
    const issues: ErrorIssue[] = [];
    let issueCount = 0;
    const addIssue = (issue: ErrorIssue): void => {
      issueCount += 1;
      if (issues.length < MAX_ISSUES) issues.push(issue);
    };

    const n = input.samples.length;
    const channelIds = new Array<string>(n);
    const times = new Array<string>(n);
    const values = new Array<number>(n);
    /** channelId + ms -> index of the first sample with that key, to catch contradicting duplicates. */
    const firstIndexByKey = new Map<string, number>();

    input.samples.forEach((sample, i) => {
      const channelId = channelByCode.get(sample.channel);
      if (channelId === undefined) {
        addIssue({
          path: `samples.${i}.channel`,
          message: `unknown channel '${sample.channel}' on equipment ${equipment.code} (known: ${[...channelByCode.keys()].sort().join(', ') || 'none'})`,
        });
        return;
      }
      const tMs = deviceTimeMs(sample.t);
      const future = futureTimeIssue(tMs, nowMs, this.maxFutureMs, `samples.${i}.t`);
      if (future) {
        addIssue(future);
        return;
      }
      const key = `${channelId}@${tMs}`;
      const first = firstIndexByKey.get(key);
      if (first === undefined) firstIndexByKey.set(key, i);
      else if (values[first] !== sample.value) {
        addIssue({
          path: `samples.${i}.value`,
          message: `channel '${sample.channel}' at ${new Date(tMs).toISOString()} has value ${sample.value} here and ${values[first]} in samples.${first}`,
        });
        return;
      }
      channelIds[i] = channelId;
      times[i] = new Date(tMs).toISOString();
      values[i] = sample.value;
    });

    if (issueCount > 0) {
      ingestSamplesTotal.inc({ outcome: 'rejected' }, n);
      const first = issues[0]!;
      throw unprocessable(
        `Samples refused, nothing stored: ${first.path}: ${first.message}${issueCount > 1 ? ` (and ${issueCount - 1} more)` : ''}`,
        issues,
      );
    }

    // One statement: the insert, and (from the same snapshot, i.e. rows stored before this request)
    // how many of the duplicates carried another value than the one kept.
    const [result] = await this.prisma.$queryRaw<Array<{ stored: number; conflicts: number; minT: Date | string | null; maxT: Date | string | null }>>`
      WITH input AS (
        SELECT * FROM unnest(${channelIds}::uuid[], ${times}::timestamptz[], ${values}::float8[]) AS s("channelId", "t", "value")
      ), inserted AS (
        INSERT INTO "Sample" ("channelId", "t", "value")
        SELECT "channelId", "t", "value" FROM input
        ON CONFLICT ("channelId", "t") DO NOTHING
        RETURNING "t"
      )
      SELECT
        (SELECT count(*) FROM inserted)::int AS "stored",
        (SELECT min("t") FROM inserted) AS "minT",
        (SELECT max("t") FROM inserted) AS "maxT",
        (SELECT count(*) FROM input i JOIN "Sample" s ON s."channelId" = i."channelId" AND s."t" = i."t"
           WHERE s."value" IS DISTINCT FROM i."value")::int AS "conflicts"`;
    const stored = result?.stored ?? 0;
    const duplicates = n - stored;
    ingestSamplesTotal.inc({ outcome: 'stored' }, stored);
    if (duplicates > 0) ingestSamplesTotal.inc({ outcome: 'duplicate' }, duplicates);

    let batchesQueued = 0;
    if (stored > 0 && result?.minT && result.maxT) {
      const fromMs = new Date(result.minT).getTime();
      const toMs = new Date(result.maxT).getTime();
      const batchIds = await batchesCoveringSpan(this.prisma, equipment.lineId, fromMs, toMs);
      await this.recompute.enqueue(batchIds, 'samples');
      batchesQueued = batchIds.length;
    }
    return { stored, duplicates, conflicts: result?.conflicts ?? 0, rejected: 0, batchesQueued };
  }
}
