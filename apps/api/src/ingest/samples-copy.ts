/**
 * `COPY ... FROM STDIN` through the pg driver without pg-copy-streams (not a dependency here): pg's
 * client.query() accepts any "submittable" object and hands it the protocol messages of its query. On
 * CopyInResponse we send the prepared CopyData chunks and CopyDone; CommandComplete carries "COPY <n>".
 * This is the PostgreSQL frontend/backend protocol's copy-in sub-protocol (PostgreSQL docs, "Message Flow:
 * COPY Operations"). The api's sample ingest uses it with the binary format below; bench/ uses it for
 * its raw-COPY baseline. The staging statements are here too, so bench/ingest.ts runs exactly what the
 * api runs, without Nest.
 */
import type pg from 'pg';
import { batchWindowsSql, windowCoversSql } from './batch-window.js';

interface CopyConnection {
  /** pg's Connection keeps its socket here. */
  stream?: { cork?: () => void; uncork?: () => void };
  query(text: string): void;
  sendCopyFromChunk(chunk: Buffer): void;
  endCopyFrom(): void;
}

class CopyFromStdin {
  callback?: (error: Error | null, rows?: number) => void;
  private rows = 0;
  private failed: Error | null = null;

  constructor(
    readonly text: string,
    private readonly chunks: readonly Buffer[],
  ) {}

  submit(connection: CopyConnection): void {
    connection.query(this.text);
  }

  handleCopyInResponse(connection: CopyConnection): void {
    // One write for the data and CopyDone (each message is otherwise a write of its own).
    connection.stream?.cork?.();
    for (const chunk of this.chunks) connection.sendCopyFromChunk(chunk);
    connection.endCopyFrom();
    connection.stream?.uncork?.();
  }

  handleCommandComplete(msg: { text?: string }): void {
    const match = /^COPY (\d+)/.exec(msg.text ?? '');
    if (match) this.rows = Number(match[1]);
  }

  handleError(error: Error): void {
    this.failed = error;
    this.callback?.(error);
    this.callback = undefined;
  }

  handleReadyForQuery(): void {
    this.callback?.(this.failed, this.rows);
    this.callback = undefined;
  }

  // Not expected during COPY FROM; present because the client may call them on an active query.
  handleRowDescription(): void {}
  handleDataRow(): void {}
  handleEmptyQuery(): void {}
  handlePortalSuspended(): void {}
  handleCopyData(): void {}
}

/** Runs `copySql` (a COPY ... FROM STDIN) with `chunks` as the data; resolves with the rows copied. */
export function copyFromStdin(client: pg.Client | pg.PoolClient, copySql: string, chunks: readonly Buffer[]): Promise<number> {
  return new Promise((resolve, reject) => {
    const submittable = new CopyFromStdin(copySql, chunks);
    submittable.callback = (error, rows) => (error ? reject(error) : resolve(rows ?? 0));
    (client as unknown as { query(q: unknown): void }).query(submittable);
  });
}

// ---- the staging statements of the samples path (bench/ingest.ts runs them straight through pg too) ----

/**
 * Per-connection staging table: each request COPYs its rows here (binary), then one INSERT ... SELECT
 * moves them into "Sample". ON COMMIT DELETE ROWS empties it at the end of every transaction.
 */
export const STAGING = 'ausline_sample_in';
export const CREATE_STAGING = `CREATE TEMP TABLE IF NOT EXISTS ${STAGING} ("channelId" uuid NOT NULL, "t" timestamptz(3) NOT NULL, "value" float8 NOT NULL) ON COMMIT DELETE ROWS`;
export const COPY_STAGING = `COPY ${STAGING} ("channelId", "t", "value") FROM STDIN (FORMAT binary)`;
/**
 * The first statement of a samples transaction: claims the Idempotency-Key when there is one ($2..$5:
 * principal, key, request hash, TTL in ms; all null without a key) and reads the equipment with its
 * channels ($1), in one round trip. "claimId" is null when the key was already claimed (then
 * claimInTransaction tells why) or not given. Zero rows: no such equipment.
 */
export const CLAIM_AND_EQUIPMENT = {
  name: 'ausline-samples-claim-equipment',
  text: `WITH claim AS (
      INSERT INTO "IdempotencyRecord" ("principal", "key", "requestHash", "expiresAt")
      SELECT $2::text, $3::text, $4::text, now() + $5::float8 * interval '1 millisecond' WHERE $2::text IS NOT NULL
      ON CONFLICT ("principal", "key") DO NOTHING
      RETURNING "id"
    )
    SELECT e."code", e."lineId", c."id" AS "channelId", c."code" AS "channelCode", (SELECT "id" FROM claim) AS "claimId"
    FROM "Equipment" e LEFT JOIN "Channel" c ON c."equipmentId" = e."id"
    WHERE e."id" = $1::uuid`,
};

/**
 * The second: moves the staged rows into "Sample" (ON CONFLICT DO NOTHING), and in the same round trip
 * counts them, counts the conflicts (only when some rows were duplicates: a second primary-key probe per
 * row otherwise saved), finds the batches to queue, and stores the reply for the claim ($5, or null).
 *
 * $1 line id, $2 samples in the request, $3/$4 the request's first and last time, $5 the claim.
 * "queued": batches of the line covering the newly stored rows (the reply's batchesQueued);
 * "requeued": when there were duplicates, the batches covering the whole request (an earlier attempt may
 * have stored those rows and died before queueing). The conflicts count reads "Sample" as it was before
 * this statement (one snapshot), i.e. the rows the INSERT found already stored.
 */
export const STORE_FROM_STAGING = {
  name: 'ausline-samples-store',
  text: `WITH inserted AS (
      INSERT INTO "Sample" ("channelId", "t", "value")
      SELECT "channelId", "t", "value" FROM ${STAGING}
      ON CONFLICT ("channelId", "t") DO NOTHING
      RETURNING "t"
    ), span AS (
      SELECT count(*)::int AS "stored", min("t") AS "minT", max("t") AS "maxT" FROM inserted
    ), counted AS (
      SELECT span.*,
        CASE WHEN span."stored" < $2::int THEN (
          SELECT count(*)::int FROM ${STAGING} i
          JOIN "Sample" s ON s."channelId" = i."channelId" AND s."t" = i."t"
          WHERE s."value" IS DISTINCT FROM i."value"
        ) ELSE 0 END AS "conflicts"
      FROM span
    ), windows AS (
      ${batchWindowsSql('$1')}
    ), queued AS (
      SELECT w."id" FROM windows w, counted c WHERE c."stored" > 0 AND ${windowCoversSql('w', 'c."minT"', 'c."maxT"')}
    ), requeued AS (
      SELECT w."id" FROM windows w, counted c WHERE c."stored" < $2::int AND ${windowCoversSql('w', '$3::timestamptz', '$4::timestamptz')}
    ), reply AS (
      UPDATE "IdempotencyRecord" r SET "responseStatus" = 200, "responseBody" = jsonb_build_object(
        'stored', c."stored", 'duplicates', $2::int - c."stored", 'conflicts', c."conflicts", 'rejected', 0,
        'batchesQueued', (SELECT count(*)::int FROM queued))
      FROM counted c WHERE r."id" = $5::uuid
      RETURNING r."id"
    )
    SELECT c."stored", c."conflicts",
      ARRAY(SELECT "id" FROM queued) AS "queued",
      ARRAY(SELECT "id" FROM requeued) AS "requeued",
      (SELECT count(*)::int FROM reply) AS "replied"
    FROM counted c`,
};

/**
 * The common case first: the rows COPYed straight into "Sample" (COPY inserts in batches, the cheapest
 * way in). A row already stored ends it with a unique violation (SQLSTATE 23505); the transaction is
 * then rolled back and the request runs again through the staging table (STORE_FROM_STAGING), which
 * skips and counts duplicates.
 */
export const COPY_SAMPLE = `COPY "Sample" ("channelId", "t", "value") FROM STDIN (FORMAT binary)`;

/**
 * After COPY_SAMPLE stored every row: the batches covering them, and the stored reply for the claim.
 * $1 line id, $2 samples stored, $3/$4 the first and last time, $5 the claim (or null).
 */
export const STORE_COPIED = {
  name: 'ausline-samples-store-copied',
  text: `WITH windows AS (
      ${batchWindowsSql('$1')}
    ), queued AS (
      SELECT w."id" FROM windows w WHERE ${windowCoversSql('w', '$3::timestamptz', '$4::timestamptz')}
    ), reply AS (
      UPDATE "IdempotencyRecord" r SET "responseStatus" = 200, "responseBody" = jsonb_build_object(
        'stored', $2::int, 'duplicates', 0, 'conflicts', 0, 'rejected', 0, 'batchesQueued', (SELECT count(*)::int FROM queued))
      WHERE r."id" = $5::uuid
      RETURNING r."id"
    )
    SELECT ARRAY(SELECT "id" FROM queued) AS "queued", (SELECT count(*)::int FROM reply) AS "replied"`,
};

// ---- binary COPY rows (uuid, timestamptz, float8) ---------------------------------------------------
//
// PostgreSQL docs, "COPY — Binary Format": an 11-byte signature, a 32-bit flags field and a 32-bit header
// extension length; then per tuple a 16-bit field count and per field a 32-bit length and the value in
// the type's binary send format (uuid: its 16 bytes; timestamptz: signed 64-bit microseconds since
// 2000-01-01 00:00 UTC; float8: IEEE 754 big-endian); a 16-bit -1 ends the data.

const SIGNATURE = Buffer.from('PGCOPY\n\xff\r\n\0', 'latin1');
const HEADER_BYTES = SIGNATURE.length + 8;
/** 2 (field count) + 4 + 16 (uuid) + 4 + 8 (timestamptz) + 4 + 8 (float8). */
const ROW_BYTES = 46;
/** 2000-01-01T00:00:00Z in Unix milliseconds: PostgreSQL's epoch for timestamps. */
const PG_EPOCH_MS = 946_684_800_000;
const TWO_32 = 4_294_967_296;

/** The 16 bytes of a UUID in canonical text form. */
export function uuidBytes(uuid: string): Buffer {
  return Buffer.from(uuid.replace(/-/g, ''), 'hex');
}

/**
 * One COPY ... (FORMAT binary) payload of `n` rows (uuid, timestamptz, float8): `channel[i]` the channel
 * id's 16 bytes, `tMs[i]` whole Unix milliseconds, `value[i]` the reading.
 */
export function binaryCopyRows(n: number, channel: (i: number) => Buffer, tMs: (i: number) => number, value: (i: number) => number): Buffer {
  const out = Buffer.allocUnsafe(HEADER_BYTES + n * ROW_BYTES + 2);
  SIGNATURE.copy(out, 0);
  let o = SIGNATURE.length;
  out.writeInt32BE(0, o); // flags: no OIDs
  out.writeInt32BE(0, o + 4); // no header extension
  o += 8;
  for (let i = 0; i < n; i++) {
    out.writeInt16BE(3, o);
    out.writeInt32BE(16, o + 2);
    channel(i).copy(out, o + 6);
    out.writeInt32BE(8, o + 22);
    // Microseconds since 2000: |value| < 2^53 for any date this api accepts, so a double holds it exactly.
    const us = (tMs(i) - PG_EPOCH_MS) * 1000;
    const high = Math.floor(us / TWO_32);
    out.writeInt32BE(high, o + 26);
    out.writeUInt32BE(us - high * TWO_32, o + 30);
    out.writeInt32BE(8, o + 34);
    out.writeDoubleBE(value(i), o + 38);
    o += ROW_BYTES;
  }
  out.writeInt16BE(-1, o);
  return out;
}
