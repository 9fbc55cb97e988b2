import { Inject, Injectable, type OnApplicationShutdown } from '@nestjs/common';
import pg from 'pg';
import { deviceTimeMs, type SamplesPost, type SamplesReply } from '@ausline/contracts';
import { API_CONFIG, type ApiConfig } from '../app-config.js';
import { notFound, unprocessable, type ErrorIssue } from '../http/errors.js';
import { JsonLogger } from '../http/logger.js';
import { ingestSamplesTotal } from '../ops/metrics.js';
import { batchesCoveringSpan } from './batch-window.js';
import { futureTimeIssue } from './device-time.js';
import { claimedOrThrow, claimInTransaction, completeInTransaction, IdempotentReplay, type IdempotencyClaim } from './idempotency.js';
import { ingestSettingsFrom } from './ingest-settings.js';
import { RecomputeQueue } from './recompute-queue.js';
import { binaryCopyRows, copyFromStdin, uuidBytes } from './samples-copy.js';

/** Problems listed per refused request; the message says how many there were in all. */
const MAX_ISSUES = 100;
/** Connections of the samples path's own pool (beside Prisma's), the api's concurrent sample writes. */
const SAMPLES_POOL_MAX = 8;
/** The status a stored samples reply is replayed with (the handler's @HttpCode). */
const SAMPLES_OK = 200;
/** channel index × 2^42 + epoch ms: a number key per (channel, t) (epoch ms < 2^42 until the year 2109). */
const CHANNEL_KEY_STRIDE = 2 ** 42;

/**
 * Per-connection staging table: each request COPYs its rows here (binary), then one INSERT ... SELECT
 * moves them into "Sample". ON COMMIT DELETE ROWS empties it at the end of every transaction.
 */
const STAGING = 'ausline_sample_in';
const CREATE_STAGING = `CREATE TEMP TABLE IF NOT EXISTS ${STAGING} ("channelId" uuid NOT NULL, "t" timestamptz(3) NOT NULL, "value" float8 NOT NULL) ON COMMIT DELETE ROWS`;
const COPY_STAGING = `COPY ${STAGING} ("channelId", "t", "value") FROM STDIN (FORMAT binary)`;
const INSERT_FROM_STAGING = {
  name: 'ausline-samples-insert',
  text: `WITH inserted AS (
      INSERT INTO "Sample" ("channelId", "t", "value")
      SELECT "channelId", "t", "value" FROM ${STAGING}
      ON CONFLICT ("channelId", "t") DO NOTHING
      RETURNING "t"
    )
    SELECT count(*)::int AS "stored", min("t") AS "minT", max("t") AS "maxT" FROM inserted`,
};
/**
 * Of the samples not stored, how many differ from the stored row. Run only when there were duplicates.
 * Rows this transaction stored match their staging rows, and a row another transaction committed since
 * the INSERT is one that made a sample here a duplicate, so this counts what the INSERT skipped.
 */
const COUNT_CONFLICTS = {
  name: 'ausline-samples-conflicts',
  text: `SELECT count(*)::int AS "conflicts" FROM ${STAGING} i
    JOIN "Sample" s ON s."channelId" = i."channelId" AND s."t" = i."t"
    WHERE s."value" IS DISTINCT FROM i."value"`,
};
const EQUIPMENT_CHANNELS = {
  name: 'ausline-samples-equipment',
  text: `SELECT e."code", e."lineId", c."id" AS "channelId", c."code" AS "channelCode"
    FROM "Equipment" e LEFT JOIN "Channel" c ON c."equipmentId" = e."id"
    WHERE e."id" = $1::uuid`,
};

interface Outcome {
  /** The reply, or the stored reply to replay. */
  answer: { reply: SamplesReply } | { replay: IdempotentReplay };
  /** Batches to queue once the transaction has committed. */
  recompute: string[];
}

/**
 * Stores a controller's samples for one piece of equipment.
 *
 * All-or-nothing: the request is checked whole first (channels known on this equipment, no time too
 * far ahead, no two samples of one channel and time with different values); then, in ONE transaction on
 * a raw pg connection, the rows are COPYed (binary) into a per-connection staging table and moved into
 * "Sample" by one INSERT ... SELECT ... ON CONFLICT DO NOTHING, so a retry or an overlapping re-send
 * stores nothing twice and a failure stores nothing at all. Samples may arrive in any order
 * (store-and-forward backfill, practice.md §5.3).
 *
 * With an Idempotency-Key the claim and the reply are written in the same transaction
 * (claimInTransaction): a failed attempt leaves no claim, so its retry goes through at once.
 *
 * Recompute: after the commit, every batch of the line whose window covers the newly stored samples is
 * queued (`batchesQueued` counts them). A request that found duplicates also re-queues the batches
 * covering its whole span, and so does a replay: an earlier attempt may have committed its rows and
 * died before queueing (docs/reliability.md), and its retry must not leave the batch without a
 * recompute. Those re-queues are not counted in `batchesQueued` (they queue no new data; the queue
 * folds them into one debounced job per batch).
 */
@Injectable()
export class SamplesService implements OnApplicationShutdown {
  private readonly maxFutureMs: number;
  private readonly idempotencyTtlMs: number;
  private readonly pool: pg.Pool;
  /** Pool clients whose session already has the staging table. */
  private readonly staged = new WeakSet<pg.PoolClient>();
  private readonly logger: JsonLogger;

  constructor(
    @Inject(API_CONFIG) config: ApiConfig,
    private readonly recompute: RecomputeQueue,
  ) {
    const settings = ingestSettingsFrom(config);
    this.maxFutureMs = settings.maxFutureMs;
    this.idempotencyTtlMs = settings.idempotencyTtlMs;
    this.logger = new JsonLogger(config.LOG_LEVEL);
    this.pool = new pg.Pool({ connectionString: config.DATABASE_URL, max: SAMPLES_POOL_MAX, connectionTimeoutMillis: 5_000 });
    // An idle connection dropped by the server (restart, outage) is discarded by the pool; without a
    // listener the 'error' event would end the process.
    this.pool.on('error', (error) => this.logger.event('warn', { msg: 'samples pool: idle connection lost', error: error.message }));
    // While a client is checked out the pool does not listen to it; a lost connection then fails the
    // running query (handled in ingest()) and must not also be an unhandled 'error' event.
    this.pool.on('connect', (client) => client.on('error', () => undefined));
  }

  async onApplicationShutdown(): Promise<void> {
    await this.pool.end().catch(() => undefined);
  }

  async ingest(equipmentId: string, input: SamplesPost, claim?: IdempotencyClaim): Promise<SamplesReply> {
    const client = await this.pool.connect();
    // A connection whose state is unknown (a failed BEGIN, COMMIT or ROLLBACK, a lost server) is
    // discarded instead of going back to the pool.
    let broken: Error | undefined;
    let outcome: Outcome;
    let rolledBack = false;
    try {
      if (!this.staged.has(client)) {
        await client.query(CREATE_STAGING);
        this.staged.add(client);
      }
      await client.query('BEGIN');
      try {
        outcome = await this.inTransaction(client, equipmentId, input, claim);
      } catch (error) {
        await client.query('ROLLBACK').then(
          () => (rolledBack = true),
          (rollbackError: unknown) => (broken = asError(rollbackError)),
        );
        throw error;
      }
      await client.query('COMMIT');
    } catch (error) {
      if (!rolledBack) broken ??= asError(error);
      throw error;
    } finally {
      client.release(broken);
    }
    // Committed: the data is safe; the queue only carries work (a Redis failure marks the batches stale).
    await this.recompute.enqueue(outcome.recompute, 'samples');
    if ('replay' in outcome.answer) throw outcome.answer.replay;
    return outcome.answer.reply;
  }

  private async inTransaction(client: pg.PoolClient, equipmentId: string, input: SamplesPost, claim?: IdempotencyClaim): Promise<Outcome> {
    let claimed: { id: string } | undefined;
    if (claim) {
      try {
        claimed = claimedOrThrow(await claimInTransaction(client, claim, this.idempotencyTtlMs));
      } catch (answer) {
        if (!(answer instanceof IdempotentReplay) || answer.status !== SAMPLES_OK) throw answer;
        // A replay of a stored success: queue the batches of the whole request again (see above).
        const equipment = await this.equipment(client, equipmentId);
        const span = equipment ? requestSpan(input) : undefined;
        const recompute = equipment && span ? await batchesCoveringSpan(client, equipment.lineId, span.fromMs, span.toMs) : [];
        return { answer: { replay: answer }, recompute };
      }
    }

    const equipment = await this.equipment(client, equipmentId);
    if (!equipment) throw notFound(`Equipment ${equipmentId} does not exist`);
    const rows = this.checked(equipment, input);

    const n = input.samples.length;
    await copyFromStdin(client, COPY_STAGING, [binaryCopyRows(n, (i) => rows.channel[i]!, (i) => rows.tMs[i]!, (i) => input.samples[i]!.value)]);
    const inserted = (await client.query<{ stored: number; minT: Date | null; maxT: Date | null }>(INSERT_FROM_STAGING)).rows[0];
    const stored = inserted?.stored ?? 0;
    const duplicates = n - stored;
    const conflicts = duplicates > 0 ? ((await client.query<{ conflicts: number }>(COUNT_CONFLICTS)).rows[0]?.conflicts ?? 0) : 0;

    const queued = stored > 0 && inserted?.minT && inserted.maxT ? await batchesCoveringSpan(client, equipment.lineId, inserted.minT.getTime(), inserted.maxT.getTime()) : [];
    const requeued = duplicates > 0 ? await batchesCoveringSpan(client, equipment.lineId, rows.fromMs, rows.toMs) : [];
    const reply: SamplesReply = { stored, duplicates, conflicts, rejected: 0, batchesQueued: queued.length };
    if (claimed) await completeInTransaction(client, claimed.id, SAMPLES_OK, reply);

    ingestSamplesTotal.inc({ outcome: 'stored' }, stored);
    if (duplicates > 0) ingestSamplesTotal.inc({ outcome: 'duplicate' }, duplicates);
    return { answer: { reply }, recompute: [...new Set([...queued, ...requeued])] };
  }

  private async equipment(client: pg.PoolClient, equipmentId: string): Promise<EquipmentChannels | undefined> {
    const { rows } = await client.query<{ code: string; lineId: string; channelId: string | null; channelCode: string | null }>({
      ...EQUIPMENT_CHANNELS,
      values: [equipmentId],
    });
    if (rows.length === 0) return undefined;
    const channels = new Map<string, { index: number; bytes: Buffer }>();
    for (const r of rows) if (r.channelId !== null && r.channelCode !== null) channels.set(r.channelCode, { index: channels.size, bytes: uuidBytes(r.channelId) });
    return { code: rows[0]!.code, lineId: rows[0]!.lineId, channels };
  }

  /** Checks the request whole; throws the 422 naming every refused sample (up to MAX_ISSUES). */
  private checked(equipment: EquipmentChannels, input: SamplesPost): CheckedRows {
    const nowMs = Date.now();
    const issues: ErrorIssue[] = [];
    let issueCount = 0;
    const addIssue = (issue: ErrorIssue): void => {
      issueCount += 1;
      if (issues.length < MAX_ISSUES) issues.push(issue);
    };

    const n = input.samples.length;
    const channel = new Array<Buffer>(n);
    const tMs = new Array<number>(n);
    let fromMs = Infinity;
    let toMs = -Infinity;
    /** (channel, t) key -> index of the first sample with that key, to catch contradicting duplicates. */
    const firstIndexByKey = new Map<number, number>();

    for (let i = 0; i < n; i++) {
      const sample = input.samples[i]!;
      const known = equipment.channels.get(sample.channel);
      if (known === undefined) {
        addIssue({
          path: `samples.${i}.channel`,
          message: `unknown channel '${sample.channel}' on equipment ${equipment.code} (known: ${[...equipment.channels.keys()].sort().join(', ') || 'none'})`,
        });
        continue;
      }
      // Whole milliseconds, as the column (timestamptz(3)) and Date keep them.
      const t = Math.trunc(deviceTimeMs(sample.t));
      const future = futureTimeIssue(t, nowMs, this.maxFutureMs, `samples.${i}.t`);
      if (future) {
        addIssue(future);
        continue;
      }
      const key = known.index * CHANNEL_KEY_STRIDE + t;
      const first = firstIndexByKey.get(key);
      if (first === undefined) firstIndexByKey.set(key, i);
      else if (input.samples[first]!.value !== sample.value) {
        addIssue({
          path: `samples.${i}.value`,
          message: `channel '${sample.channel}' at ${new Date(t).toISOString()} has value ${sample.value} here and ${input.samples[first]!.value} in samples.${first}`,
        });
        continue;
      }
      channel[i] = known.bytes;
      tMs[i] = t;
      if (t < fromMs) fromMs = t;
      if (t > toMs) toMs = t;
    }

    if (issueCount > 0) {
      ingestSamplesTotal.inc({ outcome: 'rejected' }, n);
      const first = issues[0]!;
      throw unprocessable(
        `Samples refused, nothing stored: ${first.path}: ${first.message}${issueCount > 1 ? ` (and ${issueCount - 1} more)` : ''}`,
        issues,
      );
    }
    return { channel, tMs, fromMs, toMs };
  }
}

interface EquipmentChannels {
  code: string;
  lineId: string;
  /** By channel code: a small index (for duplicate keys) and the id's 16 bytes (for COPY). */
  channels: Map<string, { index: number; bytes: Buffer }>;
}

interface CheckedRows {
  channel: Buffer[];
  tMs: number[];
  fromMs: number;
  toMs: number;
}

/** First and last time of a request (validated by the schema, so every t parses). */
function requestSpan(input: SamplesPost): { fromMs: number; toMs: number } | undefined {
  let fromMs = Infinity;
  let toMs = -Infinity;
  for (const s of input.samples) {
    const t = deviceTimeMs(s.t);
    if (t < fromMs) fromMs = t;
    if (t > toMs) toMs = t;
  }
  return Number.isFinite(fromMs) ? { fromMs, toMs } : undefined;
}

function asError(error: unknown): Error {
  return error instanceof Error ? error : new Error(String(error));
}
