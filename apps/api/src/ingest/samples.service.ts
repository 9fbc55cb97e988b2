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
import { binaryCopyRows, CLAIM_AND_EQUIPMENT, COPY_SAMPLE, copyFromStdin, COPY_STAGING, CREATE_STAGING, STORE_COPIED, STORE_FROM_STAGING, uuidBytes } from './samples-copy.js';

/** Problems listed per refused request; the message says how many there were in all. */
const MAX_ISSUES = 100;
/** Connections of the samples path's own pool (beside Prisma's), the api's concurrent sample writes. */
const SAMPLES_POOL_MAX = 8;
/** The status a stored samples reply is replayed with (the handler's @HttpCode). */
const SAMPLES_OK = 200;
/** channel index × 2^42 + epoch ms: a number key per (channel, t) (epoch ms < 2^42 until the year 2109). */
const CHANNEL_KEY_STRIDE = 2 ** 42;

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
 * Each statement to Postgres is a round trip (and on a busy host a costly socket write), so a request is
 * BEGIN, claim + equipment, COPY, store (insert, counts, batches, reply), COMMIT: see samples-copy.ts.
 * The rows are first COPYed straight into "Sample" (the cheapest insert); when one of them is stored
 * already the transaction rolls back and the request runs again through the staging table.
 *
 * Recompute: after the commit, every batch of the line whose window covers the newly stored samples is
 * queued (`batchesQueued` counts them). A request that found duplicates also re-queues the batches
 * covering its whole span, and so does a replay: an earlier attempt may have committed its rows and
 * died before queueing (docs/reliability.md), and its retry must not leave the batch without a
 * recompute. Those re-queues are not counted in `batchesQueued` (they queue no new data; the queue
 * folds them into the batch's one pending job: recomputeJobOptions in libs/contracts).
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
    let outcome: Outcome;
    try {
      outcome = await this.transaction((client) => this.inTransaction(client, equipmentId, input, claim, 'direct'));
    } catch (error) {
      // Some row was stored already (a retry, an overlapping re-send): all again, through the staging table.
      if (!isUniqueViolation(error)) throw error;
      outcome = await this.transaction((client) => this.inTransaction(client, equipmentId, input, claim, 'staged'));
    }
    // Committed: the data is safe; the queue only carries work (a Redis failure marks the batches stale).
    await this.recompute.enqueue(outcome.recompute, 'samples');
    if ('replay' in outcome.answer) throw outcome.answer.replay;
    return outcome.answer.reply;
  }

  /** Runs `work` in a transaction on a connection of the samples pool (with its staging table). */
  private async transaction(work: (client: pg.PoolClient) => Promise<Outcome>): Promise<Outcome> {
    const client = await this.pool.connect();
    // A connection whose state is unknown (a failed BEGIN, COMMIT or ROLLBACK, a lost server) is
    // discarded instead of going back to the pool.
    let broken: Error | undefined;
    let rolledBack = false;
    try {
      if (!this.staged.has(client)) {
        await client.query(CREATE_STAGING);
        this.staged.add(client);
      }
      await client.query('BEGIN');
      let outcome: Outcome;
      try {
        outcome = await work(client);
      } catch (error) {
        await client.query('ROLLBACK').then(
          () => (rolledBack = true),
          (rollbackError: unknown) => (broken = asError(rollbackError)),
        );
        throw error;
      }
      await client.query('COMMIT');
      return outcome;
    } catch (error) {
      if (!rolledBack) broken ??= asError(error);
      throw error;
    } finally {
      client.release(broken);
    }
  }

  private async inTransaction(client: pg.PoolClient, equipmentId: string, input: SamplesPost, claim: IdempotencyClaim | undefined, mode: 'direct' | 'staged'): Promise<Outcome> {
    // Round trip 1: the claim (when there is a key) and the equipment with its channels.
    const { rows: equipmentRows } = await client.query<EquipmentRow>({
      ...CLAIM_AND_EQUIPMENT,
      values: [equipmentId, claim?.principal ?? null, claim?.key ?? null, claim?.requestHash ?? null, this.idempotencyTtlMs],
    });
    const equipment = equipmentOf(equipmentRows);
    // (A claim the statement made for a request on unknown equipment rolls back with this transaction.)
    if (!equipment) throw notFound(`Equipment ${equipmentId} does not exist`);
    let claimId: string | null = equipmentRows[0]!.claimId;
    if (claim && claimId === null) {
      // Already claimed: why, and what to answer.
      try {
        claimId = claimedOrThrow(await claimInTransaction(client, claim, this.idempotencyTtlMs)).id;
      } catch (answer) {
        if (!(answer instanceof IdempotentReplay) || answer.status !== SAMPLES_OK) throw answer;
        // A replay of a stored success: queue the batches of the whole request again (see above).
        const span = requestSpan(input);
        const recompute = span ? await batchesCoveringSpan(client, equipment.lineId, span.fromMs, span.toMs) : [];
        return { answer: { replay: answer }, recompute };
      }
    }
    const rows = this.checked(equipment, input);

    const n = input.samples.length;
    const copyData = [binaryCopyRows(n, (i) => rows.channel[i]!, (i) => rows.tMs[i]!, (i) => input.samples[i]!.value)];
    if (mode === 'direct' && !rows.repeatsKey) {
      // Round trip 2 (COPY) straight into "Sample"; a duplicate ends it with 23505 (see ingest()).
      await copyFromStdin(client, COPY_SAMPLE, copyData);
      // Round trip 3: the batches to queue and the stored reply.
      const copied = (
        await client.query<{ queued: string[]; replied: number }>({
          ...STORE_COPIED,
          values: [equipment.lineId, n, new Date(rows.fromMs), new Date(rows.toMs), claimId],
        })
      ).rows[0]!;
      if (claimId !== null && copied.replied !== 1) throw new Error(`the Idempotency-Key claim ${claimId} was not found to store the reply`);
      ingestSamplesTotal.inc({ outcome: 'stored' }, n);
      return { answer: { reply: { stored: n, duplicates: 0, conflicts: 0, rejected: 0, batchesQueued: copied.queued.length } }, recompute: copied.queued };
    }
    // Round trip 2 (COPY): the rows into the staging table.
    await copyFromStdin(client, COPY_STAGING, copyData);
    // Round trip 3: into "Sample", with the counts, the batches to queue and the stored reply.
    const result = (
      await client.query<{ stored: number; conflicts: number; queued: string[]; requeued: string[]; replied: number }>({
        ...STORE_FROM_STAGING,
        values: [equipment.lineId, n, new Date(rows.fromMs), new Date(rows.toMs), claimId],
      })
    ).rows[0]!;
    if (claimId !== null && result.replied !== 1) throw new Error(`the Idempotency-Key claim ${claimId} was not found to store the reply`);
    const stored = result.stored;
    const duplicates = n - stored;
    const reply: SamplesReply = { stored, duplicates, conflicts: result.conflicts, rejected: 0, batchesQueued: result.queued.length };

    ingestSamplesTotal.inc({ outcome: 'stored' }, stored);
    if (duplicates > 0) ingestSamplesTotal.inc({ outcome: 'duplicate' }, duplicates);
    return { answer: { reply }, recompute: [...new Set([...result.queued, ...result.requeued])] };
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
    let repeatsKey = false;

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
      else if (input.samples[first]!.value === sample.value) repeatsKey = true;
      else {
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
    return { channel, tMs, fromMs, toMs, repeatsKey };
  }
}

interface EquipmentRow {
  code: string;
  lineId: string;
  channelId: string | null;
  channelCode: string | null;
  claimId: string | null;
}

/** The equipment and its channels from the rows of CLAIM_AND_EQUIPMENT; undefined when there were none. */
function equipmentOf(rows: EquipmentRow[]): EquipmentChannels | undefined {
  if (rows.length === 0) return undefined;
  const channels = new Map<string, { index: number; bytes: Buffer }>();
  for (const r of rows) if (r.channelId !== null && r.channelCode !== null) channels.set(r.channelCode, { index: channels.size, bytes: uuidBytes(r.channelId) });
  return { code: rows[0]!.code, lineId: rows[0]!.lineId, channels };
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
  /** Some (channel, t) occurs twice (with the same value): a COPY straight into "Sample" would fail. */
  repeatsKey: boolean;
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

/** PostgreSQL's unique_violation (SQLSTATE 23505), as the pg driver reports it. */
function isUniqueViolation(error: unknown): boolean {
  return error instanceof Error && (error as { code?: unknown }).code === '23505';
}

function asError(error: unknown): Error {
  return error instanceof Error ? error : new Error(String(error));
}
